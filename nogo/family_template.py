"""Families of scenarios, the declaration stage: a template and the scenarios (members) it generates.

A *template* gives ranges: numbers of labs, settings per lab (one number for
every lab, or one per lab such as ``3/2``), numbers of outcomes, which labs
hold an inner observer (read out at the lab's setting 1), sequential friends,
nested friends and the reading of local agency.  Every combination is a
:class:`Member`; each member is written as an ordinary theory (YAML text,
:meth:`Member.theory_text`) with absoluteness, local agency *generated from
the light-cone structure* (:mod:`nogo.lightcone`: labs pairwise space-like,
inner observers before their lab's choice; the published all-events form of
K.-W. Bong et al., Nature Physics 16, 1199 (2020), or the one-lab-at-a-time
reading for comparison), the Bell-local set as mixtures of deterministic
local strategies (J. S. Bell, Physics 1, 195 (1964)) and as joint
counterfactual outcomes with setting independence (A. Fine, PRL 48, 291
(1982)), and the partially deterministic set (mixtures of no-signalling
behaviours whose read-out outcomes the hidden variable fixes;
arXiv:2510.25127).

Sequential friends (``sequence: k``): in every friend lab the friend
measures k times in sequence; at setting j <= k the super-observer reads out
the j-th record, at a larger setting it undoes every measurement and measures
itself; the j-th record exists only in runs whose setting is >= j, and each
stage's decision (read out now, or undo and instruct the next measurement) is
free.  Local agency then says: the joint of the records made so far and of
every event in the other labs does not depend on the decisions still to
come.  This is *exactly* the scenario with k inner observers per lab, all
present in every run and measuring before the lab's choice (records
``A_f1..A_fk`` read out at settings 1..k, local agency generated for the
default light cone): a model of the latter gives one of the former by
forgetting the records that do not exist; conversely a sequential model is
extended, lab by lab, by drawing the missing records at setting j from their
conditional at a setting > k given the earlier records and every event
outside the lab.  That argument is ours (written out in DEVELOPERS.md); the
sequential scenario itself is that of arXiv:2305.09102.

Nested friends (``nested: d``): inside every friend lab a chain of d further
friends, each inside the previous one and read out by it in every run
(``read_out_at: always``, DEVELOPERS.md "Nested observers"), all absolute.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

from .errors import InputError, Where

PARTY_NAMES = "ABCDEFGH"


@dataclass(frozen=True)
class Member:
    """One scenario of a family: settings per lab, outcomes, which labs hold an inner observer."""

    settings: tuple[int, ...]
    outcomes: int
    friends: tuple[bool, ...]
    sequence: int = 1  # friend measurements per friend lab (sequential friend, read out at settings 1..sequence)
    nested: int = 0  # friends of friends stacked inside each friend (read_out_at: always; sequence 1 only)
    agency: str = "published"  # local agency: "published" (all events) | "one-lab" (one lab at a time)

    @property
    def labs(self) -> int:
        return len(self.settings)

    @property
    def parties(self) -> tuple[str, ...]:
        return tuple(PARTY_NAMES[i] for i in range(self.labs))

    @property
    def key(self) -> str:
        fr = "".join(p for p, f in zip(self.parties, self.friends) if f) or "none"
        seq = f"-seq{self.sequence}" if self.sequence > 1 else ""
        seq += f"-nest{self.nested}" if self.nested else ""
        seq += "-one-lab" if self.agency == "one-lab" else ""
        return f"{self.labs}labs-s{'x'.join(map(str, self.settings))}-o{self.outcomes}-friends-{fr}{seq}"

    def describe(self) -> str:
        fr = ", ".join(p for p, f in zip(self.parties, self.friends) if f) or "none"
        seq = (f", each friend measuring {self.sequence} times in sequence (read out at settings 1..{self.sequence})"
               if self.sequence > 1 else "")
        seq += (f", each friend holding a chain of {self.nested} friend(s) of friends, read out always"
                if self.nested else "")
        seq += ", local agency one lab at a time" if self.agency == "one-lab" else ""
        return (f"{self.labs} labs, settings {'/'.join(map(str, self.settings))}, {self.outcomes} outcomes, "
                f"inner observers in {fr}{seq}")

    def records(self, party: str) -> list[tuple[str, int]]:
        """The inner records a lab reads out, with the setting each is read out at."""
        if not self.friends[self.parties.index(party)]:
            return []
        if self.sequence == 1:
            return [(f"{party}_in", 1)]
        return [(f"{party}_f{j}", j) for j in range(1, self.sequence + 1)]

    def chain(self, party: str) -> list[tuple[str, str]]:
        """The nested friends of a friend lab, outermost first: (name, lab it sits in), read out always."""
        if not self.nested or not self.friends[self.parties.index(party)]:
            return []
        names = [f"{party}_in"] + [f"{party}_in{d + 1}" for d in range(1, self.nested + 1)]
        return [(names[d], names[d - 1]) for d in range(1, len(names))]

    def agency_names(self) -> list[str]:
        """The generated local-agency assumptions of the bundle (nogo.lightcone names)."""
        if self.agency == "published" or self.labs < 3:  # in two labs the readings coincide
            return [f"agency-{p}" for p in self.parties]
        return [f"agency-{p}-on-{q}" for p in self.parties for q in self.parties if q != p]

    def outcome_labels(self) -> list[str]:
        return ["+1", "-1"] if self.outcomes == 2 else [str(k) for k in range(self.outcomes)]

    def theory_text(self) -> str:
        outs = ", ".join(self.outcome_labels())
        lines = [f"title: {self.describe()}", "scenario:", "  parties:"]
        for p, m in zip(self.parties, self.settings):
            lines.append(f"    {p}: {{settings: [{', '.join(str(x + 1) for x in range(m))}], outcomes: [{outs}]}}")
        friends = [p for p, f in zip(self.parties, self.friends) if f]
        records = [(p, r, x) for p in self.parties for r, x in self.records(p)]
        chains = [(p, r, lab) for p in self.parties for r, lab in self.chain(p)]
        if friends:
            lines.append("  inner_observers:")
            lines += [f"    {r}: {{lab: {p}, outcomes: [{outs}], read_out_at: {x}}}" for p, r, x in records]
            lines += [f"    {r}: {{lab: {lab}, outcomes: [{outs}], read_out_at: always}}" for _, r, lab in chains]
        lines += ["light_cone:", "  says: labs pairwise space-like; inner observers measure before their lab's choice",
                  "  name: agency"] + (["  weak: true"] if self.agency == "one-lab" else []) + ["assumptions:"]
        if friends:
            lines += ["  absoluteness:", "    says: the inner records have single values in every run",
                      "    source: K.-W. Bong et al., Nature Physics 16, 1199 (2020), arXiv:1907.05607",
                      f"    absolute: [{', '.join([r for _, r, _ in records] + [r for _, r, _ in chains])}]"]
        sets = ", ".join(f"{p}.setting" for p in self.parties)
        lines += ["  hidden:", "    says: a hidden variable lam of unspecified finite size", "    hidden: lam",
                  "  lam-free:", "    says: lam does not depend on the settings",
                  "    source: A. Fine, Phys. Rev. Lett. 48, 291 (1982)",
                  f"    independent: {{events: [lam], of: [{sets}]}}",
                  "  predetermined-local:", "    says: each outcome is a function of lam and its own lab's setting",
                  "    source: J. S. Bell, Physics 1, 195 (1964)", "    predetermined:"]
        lines += [f"      - {{events: [{p}], given: [lam], depends_on: [{p}.setting]}}" for p in self.parties]
        recs = [r for _, r, _ in records]
        if recs:
            lines += ["  records-fixed:", "    says: given lam, each inner record is fixed by lam and its own lab's setting",
                      "    source: partially deterministic behaviours, arXiv:2510.25127", "    predetermined:"]
            lines += [f"      - {{events: [{r}], given: [lam], depends_on: [{p}.setting]}}" for p, r, _ in records]
            lines += ["  records-free:", "    says: given lam, the inner records depend on no setting",
                      f"    independent: {{events: [{', '.join(recs)}], of: [{sets}], given: [lam]}}"]
        lines += ["  no-signal-given-lam:", "    says: given lam, no lab's setting changes the other labs' outcomes",
                  "    source: S. Popescu and D. Rohrlich, Found. Phys. 24, 379 (1994)", "    independent:"]
        lines += [f"      - {{events: [{', '.join(q for q in self.parties if q != p)}], of: [{p}.setting], given: [lam]}}"
                  for p in self.parties]
        allcf = ", ".join(f'"{p}@*"' for p in self.parties)
        lines += ["  counterfactual:", "    says: an outcome exists for every setting of every lab, jointly",
                  "    source: A. Fine, Phys. Rev. Lett. 48, 291 (1982)", f"    counterfactual: [{', '.join(self.parties)}]",
                  "  setting-independence:", "    says: the counterfactual outcomes do not depend on the settings chosen",
                  "    source: A. Fine, Phys. Rev. Lett. 48, 291 (1982)",
                  f"    independent: {{events: [{allcf}], of: [{sets}]}}"]
        pd = (["absoluteness"] if friends else []) + ["hidden", "lam-free"] + \
            (["records-fixed", "records-free"] if recs else []) + ["no-signal-given-lam"]
        lines += ["bundles:", f"  partly-determined: [{', '.join(pd)}]",
                  f"  local-friendliness: [{', '.join((['absoluteness'] if friends else []) + self.agency_names())}]",
                  "  Bell-local: [hidden, lam-free, predetermined-local]",
                  "  Bell-local-joint: [counterfactual, setting-independence]"]
        return "\n".join(lines) + "\n"

    def theory(self):
        from .theory import load_theory_text

        return load_theory_text(self.theory_text(), f"<family member {self.key}>")


# ---------------------------------------------------------------------------
# templates
# ---------------------------------------------------------------------------
FRIEND_PATTERNS = ("all", "none", "first", "all-but-first", "each")
AGENCY = ("published", "one-lab")


@dataclass(frozen=True)
class Template:
    labs: tuple[int, ...] = (2,)
    settings: tuple[str, ...] = ("2", "3")  # "3" = every lab; "3/2" = per lab (only for that many labs)
    outcomes: tuple[int, ...] = (2,)
    friends: tuple[str, ...] = ("all",)  # all | none | first | all-but-first | each (every subset, up to order)
    sequence: tuple[int, ...] = (1,)  # friend measurements per friend lab (sequential friends)
    nested: tuple[int, ...] = (0,)  # friends of friends inside each friend (read out always)
    agency: tuple[str, ...] = ("published",)  # published (all events) | one-lab (one lab at a time)

    def check(self, where=None) -> None:
        """Every value usable, or an InputError at *where(key)* (the command line by default)."""
        at = where or (lambda key: Where("command line", key=key))

        def need(ok: bool, key: str, what: str, right: str) -> None:
            if not ok:
                raise InputError(what, at(key), right)
        for n in self.labs:
            need(2 <= n <= len(PARTY_NAMES), "labs", f"{n} labs: a family member has 2 to {len(PARTY_NAMES)} labs",
                 "write numbers of labs such as 2 or 3")
        for spec in self.settings:
            parts = spec.split("/")
            need(all(x.isdigit() for x in parts), "settings", f"'{spec}' is not a settings spec",
                 "write 3 (every lab) or 3/2 (one number per lab)")
            need(min(int(x) for x in parts) >= 1, "settings", f"settings '{spec}': every lab needs at least one setting",
                 "write 1 or more settings per lab")
        need(min(self.outcomes) >= 2, "outcomes", "a party needs at least two outcomes", "write 2 or more")
        for f in self.friends:
            need(f in FRIEND_PATTERNS, "friends", f"unknown friends pattern '{f}'", "one of: " + ", ".join(FRIEND_PATTERNS))
        need(min(self.sequence) >= 1, "sequence", "a friend measures at least once (sequence >= 1)",
             "write 1 (one measurement) or k > 1 (a sequential friend read out at settings 1..k)")
        need(min(self.nested) >= 0, "nested", "nested counts friends of friends: 0 or more",
             "write 0 (no nesting) or d >= 1 (a chain of d friends inside each friend)")
        for g in self.agency:
            need(g in AGENCY, "agency", f"unknown local-agency reading '{g}'",
                 "one of: published (every set of events outside the cone, jointly), one-lab (one lab at a time)")

    def members(self) -> list[Member]:
        """Every combination; a sequence needs a friend and as many settings; nesting only without a sequence."""
        self.check()
        out: list[Member] = []
        for n, spec, o in itertools.product(self.labs, self.settings, self.outcomes):
            parts = [int(x) for x in spec.split("/")]
            if len(parts) not in (1, n):
                continue  # a per-lab spec for another number of labs
            ms = tuple(parts * n) if len(parts) == 1 else tuple(parts)
            for fr, k, d, g in itertools.product(self._friend_patterns(n, ms), self.sequence, self.nested,
                                                 self.agency):
                if k > 1 and (not any(fr) or k > min(m for m, f in zip(ms, fr) if f)):
                    continue
                if (d and (k > 1 or not any(fr))) or (g == "one-lab" and n < 3):
                    continue  # nested sequential friends are not generated; in two labs the readings coincide
                m = Member(ms, o, fr, k, d, g)
                if m not in out:
                    out.append(m)
        return out

    def _friend_patterns(self, n: int, ms: tuple[int, ...]) -> list[tuple[bool, ...]]:
        pats: list[tuple[bool, ...]] = []
        for f in self.friends:
            if f == "each":
                seen = set()
                for bits in itertools.product((True, False), repeat=n):
                    sig = tuple(sorted(zip(ms, bits)))  # labs with equal settings play the same role
                    if sig not in seen:
                        seen.add(sig)
                        pats.append(bits)
                continue
            pats.append({"all": (True,) * n, "none": (False,) * n, "first": (True,) + (False,) * (n - 1),
                         "all-but-first": (False,) + (True,) * (n - 1)}[f])
        return pats


TEMPLATE_KEYS = {"labs", "settings", "outcomes", "friends", "sequence", "nested", "agency", "says"}


def template_from_yaml(path: str) -> Template:
    """A template file (our own layout): lists or single values of the :class:`Template` fields.

    ``labs``, ``settings`` (``3`` or ``3/2``), ``outcomes``, ``friends``,
    ``sequence`` (sequential friends: k measurements, read out at settings
    1..k), ``nested`` (a chain of d friends of friends inside each friend,
    read out always), ``agency`` (``published`` | ``one-lab``), ``says``.
    Errors name the file, the line and what is right.
    """
    from .scenario import check_keys
    from .yamlread import read_yaml_file

    data = read_yaml_file(path)
    if not isinstance(data, dict):
        raise InputError("a family template is a mapping with labs, settings, outcomes, friends", Where(path, 1),
                         "write for example: labs: [2, 3]")
    check_keys(data, TEMPLATE_KEYS, "")
    defaults = Template()

    def lst(key, conv):
        raw = data.get(key, list(getattr(defaults, key)))
        raw = raw if isinstance(raw, list) else [raw]
        if not raw:
            raise InputError(f"'{key}' lists nothing", data.where(key, key), "give at least one value")
        try:
            if conv is int and any(isinstance(x, bool) or not isinstance(x, int) for x in raw):
                raise ValueError
            return tuple(conv(x) for x in raw)
        except (TypeError, ValueError):
            raise InputError(f"'{key}' must list {'whole numbers' if conv is int else 'labels'}",
                             data.where(key, key), f"for example {key}: {list(getattr(defaults, key))}") from None
    t = Template(*(lst(k, int if k in ("labs", "outcomes", "sequence", "nested") else str)
                   for k in ("labs", "settings", "outcomes", "friends", "sequence", "nested", "agency")))
    t.check(lambda key: data.where(key, key))
    return t
