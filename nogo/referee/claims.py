"""Claims files: what a manuscript claims, written down so that each claim can be decided.

Layout (our own; the key reference is in DEVELOPERS.md, "Claims files")::

    title: one line
    says: the story, in words
    theory: friends.yaml            # default theory file for every claim (relative to this file)
    claims:
      - id: T2                      # short, unique
        where: "Theorem 2, Eq. (7)" # the manuscript's own location, free text
        says: "absoluteness and local agency imply (7)"   # its own wording, free text
        implies: {bundle: local-friendliness, inequality: CHSH}

Exactly one kind key per claim (see ``KINDS``); its value is a mapping of the
kind's keys.  Every name (bundle, assumption, inequality, file) is checked
when the file is read, so a typo is an :class:`InputError` with the file and
line, never a verdict.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path
from typing import Any

from ..errors import InputError, Where, suggest
from ..yamlread import YList, YMap, read_yaml_file

# kind -> (required keys, optional keys)
KINDS: dict[str, tuple[tuple[str, ...], tuple[str, ...]]] = {
    "implies": (("bundle", "inequality"), ("versions",)),
    "does_not_imply": (("bundle", "inequality"), ("versions",)),
    "minimal": (("bundle", "inequality"), ("background",)),
    "not_needed": (("bundle", "assumption", "inequality"), ()),
    "same_set": (("bundles",), ("time_limit",)),
    "contained_in": (("inner", "outer"), ("time_limit",)),
    "not_contained_in": (("inner", "outer"), ("time_limit",)),
    "facet": (("bundle", "inequality"), ("time_limit",)),
    "facet_count": (("bundle", "facets"), ("classes", "time_limit")),
    "violates": (("experiment", "inequality"), ("value", "tolerance")),
    "outside": (("experiment", "bundle"), ()),
    "critical_visibility": (("experiment", "bundle", "value", "tolerance"), ()),
    "quantum_bound": (("inequality", "bound"), ("level", "tolerance")),
    "contradiction": (("bundle", "pattern"), ()),
    "contradiction_within": (("bundle", "pattern", "facts"), ()),
}

VERSIONS = ("one", "all", "read-out", "no-read-out")

WORDS = {
    "implies": "implies", "does_not_imply": "does not imply", "minimal": "minimal for",
    "not_needed": "not needed for", "same_set": "same set", "contained_in": "contained in",
    "not_contained_in": "not contained in", "facet": "is a facet", "facet_count": "facet count",
    "violates": "quantum violation", "outside": "outside the set", "critical_visibility": "critical visibility",
    "quantum_bound": "quantum bound", "contradiction": "possibilistic contradiction",
    "contradiction_within": "contradiction with at most k facts",
}


@dataclass
class Claim:
    id: str
    kind: str
    where_text: str  # the manuscript's location, as written
    says: str  # the manuscript's wording
    params: dict[str, Any]  # the kind's keys, plain values (paths resolved to absolute strings)
    theory: str | None  # theory file (absolute), None for claims that need none
    line: int | None = None
    file: str | None = None

    @property
    def at(self) -> Where:
        return Where(self.file, self.line, f"claims.{self.id}")


@dataclass
class ClaimsFile:
    path: str
    title: str
    says: str
    claims: list[Claim] = field(default_factory=list)


def _plain(v):
    if isinstance(v, dict):
        return {str(k): _plain(x) for k, x in v.items()}
    if isinstance(v, list):
        return [_plain(x) for x in v]
    return v


def _path(base: Path, raw, where: Where, what: str) -> str:
    if not isinstance(raw, str) or not raw.strip():
        raise InputError(f"'{what}' must be a file path", where)
    p = (base / raw).resolve()
    if not p.is_file():
        raise InputError(f"no {what} file '{raw}' (looked for {p})", where,
                         "paths are relative to the claims file")
    return str(p)


def _number(raw, where: Where, what: str, positive: bool = False) -> str:
    """A number as text (kept exact; sympy reads it when a radical is written)."""
    if isinstance(raw, bool) or not isinstance(raw, (int, float, str)):
        raise InputError(f"'{what}' must be a number such as 0.7071, 2, 1/10 or 2*sqrt(2)", where)
    txt = str(raw).strip()
    if not txt:
        raise InputError(f"'{what}' is empty", where)
    import re

    if not re.fullmatch(r"(?:[0-9.+\-*/^() eE]|sqrt|pi)+", txt) or not re.search(r"[0-9]|pi", txt):
        raise InputError(f"'{what}' must be a number such as 0.7071, 2, 1/10 or 2*sqrt(2), not '{txt}'", where)
    if positive:
        try:
            if Fraction(txt) < 0:
                raise InputError(f"'{what}' must not be negative", where)
        except ValueError:
            raise InputError(f"'{what}' must be a plain number (decimal or fraction)", where) from None
    return txt


def read_claims(path: str | Path) -> ClaimsFile:
    """Read and check a claims file (names are checked by :func:`check_names`)."""
    p = Path(path)
    data = read_yaml_file(p)
    f = str(path)
    if not isinstance(data, dict):
        raise InputError("a claims file is a mapping with 'claims' (and optional 'title', 'says', 'theory')",
                         Where(f, 1))
    allowed = {"title", "says", "theory", "claims", "source"}
    for k in data:
        if k not in allowed:
            raise InputError(f"unknown key '{k}'", data.where(k, str(k)), suggest(str(k), allowed))
    base = p.resolve().parent
    default_theory = _path(base, data["theory"], data.where("theory", "theory"), "theory") if "theory" in data else None
    raw = data.get("claims")
    if not isinstance(raw, list) or not raw:
        raise InputError("'claims' must be a non-empty list", data.where("claims", "claims") if "claims" in data
                         else Where(f, 1), "each claim: {id, where, says, KIND: {...}}")
    out = ClaimsFile(f, str(data.get("title", "")), str(data.get("says", "")))
    seen: set[str] = set()
    for i, item in enumerate(raw):
        w = raw.where(i, f"claims[{i}]") if isinstance(raw, YList) else Where(f)
        c = _read_claim(item, w, f, base, default_theory)
        if c.id in seen:
            raise InputError(f"two claims have the id '{c.id}'", w, "give each claim its own id")
        seen.add(c.id)
        out.claims.append(c)
    return out


def _claim_kind(item, cid: str, w: Where) -> str:
    """The one kind key of a claim; unknown keys refused."""
    kinds = [k for k in item if k in KINDS]
    extra = [k for k in item if k not in KINDS and k not in ("id", "where", "says", "theory")]
    if extra:
        k = extra[0]
        raise InputError(f"claim '{cid}': unknown key '{k}'", item.where(k, f"claims.{cid}.{k}"),
                         suggest(str(k), list(KINDS) + ["id", "where", "says", "theory"]))
    if len(kinds) != 1:
        raise InputError(f"claim '{cid}' must have exactly one kind key (it has {len(kinds)})", w,
                         "one of: " + ", ".join(KINDS))
    return kinds[0]


def _read_claim(item, w: Where, f: str, base: Path, default_theory) -> Claim:
    """One claim: its id, its kind and the kind's parameters, checked."""
    if not isinstance(item, dict):
        raise InputError("a claim is a mapping with 'id' and one kind key", w, "kinds: " + ", ".join(KINDS))
    cid = str(item.get("id", "")).strip()
    if not cid:
        raise InputError("a claim needs an 'id'", w)
    kind = _claim_kind(item, cid, w)
    kw = item.where(kind, f"claims.{cid}.{kind}")
    spec = item[kind]
    if not isinstance(spec, dict):
        raise InputError(f"claim '{cid}': '{kind}' takes a mapping", kw,
                         "keys: " + ", ".join(KINDS[kind][0] + KINDS[kind][1]))
    need, opt = KINDS[kind]
    for k in need:
        if k not in spec:
            raise InputError(f"claim '{cid}': '{kind}' needs '{k}'", kw, "keys: " + ", ".join(need + opt))
    for k in spec:
        if k not in need + opt:
            raise InputError(f"claim '{cid}': '{kind}' has no key '{k}'", spec.where(k, f"claims.{cid}.{kind}.{k}"),
                             suggest(str(k), need + opt) or "keys: " + ", ".join(need + opt))
    theory = (_path(base, item["theory"], item.where("theory", f"claims.{cid}.theory"), "theory")
              if "theory" in item else None if "experiment" in spec else default_theory)
    at = (lambda k: spec.where(k, f"claims.{cid}.{kind}.{k}")) if isinstance(spec, YMap) else (lambda k: kw)
    params = _claim_params(spec, cid, kind, base, at)
    if kind not in ("violates", "quantum_bound", "outside", "critical_visibility") and theory is None:
        raise InputError(f"claim '{cid}' needs a theory file", w, "add 'theory: FILE' to the claim or the file")
    c = Claim(cid, kind, str(item.get("where", "")), str(item.get("says", "")), params, theory, w.line, f)
    c.params["_where"] = {k: (at(k).line if at(k) else None) for k in spec}
    return c


def _claim_params(spec, cid: str, kind: str, base: Path, at) -> dict:
    """A claim kind's parameters as plain values: paths resolved, numbers kept as exact text."""
    params = {str(k): _plain(v) for k, v in spec.items()}
    for k in ("experiment", "pattern"):
        if k in params:
            params[k] = _path(base, params[k], at(k), k)
    if "time_limit" in params and (isinstance(params["time_limit"], bool)
                                   or not isinstance(params["time_limit"], (int, float)) or params["time_limit"] <= 0):
        raise InputError(f"claim '{cid}': 'time_limit' is a number of seconds > 0", at("time_limit"))
    for k in ("value", "tolerance", "bound"):
        if k in params:
            params[k] = _number(params[k], at(k), k, positive=(k == "tolerance"))
    for k in ("facets", "classes"):
        if k in params and (isinstance(params[k], bool) or not isinstance(params[k], int) or params[k] < 0):
            raise InputError(f"claim '{cid}': '{k}' must be a whole number", at(k))
    if "facts" in params and (not isinstance(params["facts"], int) or params["facts"] < 1):
        raise InputError(f"claim '{cid}': 'facts' must be a whole number >= 1", at("facts"))
    if "versions" in params and params["versions"] not in VERSIONS:
        raise InputError(f"claim '{cid}': 'versions' is one of {', '.join(VERSIONS)}", at("versions"),
                         suggest(str(params["versions"]), VERSIONS))
    if kind == "same_set" and (not isinstance(params["bundles"], list) or len(params["bundles"]) != 2):
        raise InputError(f"claim '{cid}': 'bundles' lists exactly two bundles", at("bundles"))
    return params


def bundle_spec(raw) -> str | list[str]:
    """A bundle as written: a name, 'a+b', or a list of assumption names."""
    if isinstance(raw, list):
        return [str(x) for x in raw]
    return str(raw)


def bundle_text(raw) -> str:
    return "+".join(raw) if isinstance(raw, list) else str(raw)


def check_names(cf: ClaimsFile, theory_of, experiment_theory) -> None:
    """Every bundle, assumption and inequality named by a claim exists (errors carry the line)."""
    from ..catalog import resolve_inequality

    for c in cf.claims:
        lines = c.params.get("_where", {})

        def w(k):
            return Where(c.file, lines.get(k, c.line), f"claims.{c.id}.{c.kind}.{k}")

        th = theory_of(c.theory) if c.theory else None
        if th is None and "experiment" in c.params:
            th = experiment_theory(c.params["experiment"])
        for k in ("bundle", "inner", "outer"):
            if k in c.params:
                _resolve(th, c.params[k], w(k))
        if "bundles" in c.params:
            for b in c.params["bundles"]:
                _resolve(th, b, w("bundles"))
        if "background" in c.params:
            _resolve(th, c.params["background"], w("background"))
        if "assumption" in c.params:
            a = str(c.params["assumption"])
            if a not in th.assumptions:
                raise InputError(f"claim '{c.id}': no assumption named '{a}'", w("assumption"),
                                 suggest(a, th.assumptions))
        if "inequality" in c.params:
            if th is None:
                raise InputError(f"claim '{c.id}' needs a theory for its inequality", c.at,
                                 "add 'theory: FILE' to the claim or the file")
            try:
                resolve_inequality(th.scenario, str(c.params["inequality"]))
            except InputError as exc:
                raise InputError(f"claim '{c.id}': {exc.message}", w("inequality"), exc.hint) from None


def _resolve(th, raw, where: Where) -> None:
    try:
        th.resolve(bundle_spec(raw))
    except InputError as exc:
        raise InputError(exc.message, where, exc.hint) from None
