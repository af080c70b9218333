"""How big a model will be, computed from the declaration before anything is built.

The one size estimator of nogo.  Every stage that builds something whose
size grows multiplicatively with the scenario (the linear model, the
possibilistic encoding, the observed coordinates an inequality is written
in, the NPA moment matrix) asks here first; above a default limit it is
refused at once with an :class:`~nogo.errors.ModelTooLarge` that names the
scenario size and the assumption responsible and the option that raises the
limit.  Computing an estimate costs microseconds: nothing is enumerated.

Counting (DESIGN.md §3).  The columns of the linear model are the joint
assignments q(e | s) of the present event variables e that obey the
read-out rules, for every settings tuple s.  Read-out rules tie variables of
one lab only (a party's outcome to an inner observer of its lab, or to its
own latent outcome ``A@x``), so the count factorises over labs and the sum
over settings tuples factorises too:

    columns = prod over labs L of  sum over settings x of L of  c(L, x)

with c(L, x) = prod of the outcome counts of L's free variables at x: the
party's outcome is fixed by the observer read out at x (through its
relabelling) or by the latent outcome ``L@x``; when both are present the
latent one is fixed as well.  Rows: one normalisation row per settings
tuple, and for an independence clause over the settings of parties P, one
row per (settings tuple that differs from its hub, outcome of the kept
events).  Each independence row touches the columns of two settings tuples.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass

from .errors import ModelTooLarge, Where

#: default largest model, in columns (unknowns); raised with --max-columns
DEFAULT_MAX_COLUMNS = 200_000
#: most observed probabilities p(outcomes|settings) a scenario may have, for any use; $NOGO_MAX_COORDINATES
DEFAULT_MAX_COORDINATES = 2_000_000
#: default largest NPA moment matrix side
DEFAULT_MAX_MOMENT_SIDE = 400
#: most operator words listed for an NPA level before merging
MAX_RAW_WORDS = 2_000_000
#: bytes per column and per non-zero entry of a compiled model (exact Fractions in dicts; measured roughly)
_BYTES_PER_COLUMN = 600
_BYTES_PER_ENTRY = 160


@dataclass(frozen=True)
class SizeEstimate:
    """Rows, columns, non-zero entries and memory of a model that has not been built."""

    kind: str
    rows: int
    columns: int
    nonzeros: int
    coordinates: int  # observed full probability coordinates

    @property
    def memory(self) -> int:
        return self.columns * _BYTES_PER_COLUMN + self.nonzeros * _BYTES_PER_ENTRY

    def describe(self) -> str:
        return (f"{_big(self.rows)} rows x {_big(self.columns)} columns, about {_big(self.nonzeros)} "
                f"non-zero entries, {_bytes(self.memory)}")


def _big(n: int) -> str:
    return f"{n:,}" if n < 10**15 else f"10^{len(str(n)) - 1}"


def _bytes(n: int) -> str:
    for unit, size in (("TB", 10**12), ("GB", 10**9), ("MB", 10**6), ("kB", 10**3)):
        if n >= size:
            return f"{n / size:.1f} {unit}" if n < 10**15 else "more than 1000 TB"
    return f"{n} bytes"


# -- what is present ----------------------------------------------------------------
def _present(scenario, assumptions) -> tuple[set[str], set[str]]:
    """(inner observers declared absolute, parties with counterfactual outcomes)."""
    from .theory import Absolute, Counterfactual  # noqa: PLC0415 - theory imports scenario, not sizes

    inner_names = {o.name for o in scenario.inner}
    absolute, counterfactual = set(), set()
    for a in assumptions:
        for c in a.clauses:
            if isinstance(c, Absolute):
                absolute.update(e for e in c.events if e in inner_names)
            elif isinstance(c, Counterfactual):
                counterfactual.update(c.parties)
    return absolute, counterfactual


def _lab_count(scenario, party, x: str, absolute: set[str], counterfactual: set[str]) -> int:
    """c(L, x): assignments of lab L's present variables that obey its read-out rules at setting x."""
    n_out = len(party.outcomes)
    count = 1
    tied = False
    for o in scenario.inner:
        if o.lab == party.name and o.name in absolute:
            count *= len(o.outcomes)
            tied = tied or o.read_out_at == x
    if party.name in counterfactual:
        count *= n_out ** len(party.settings)
        if tied:
            count //= n_out  # L@x = L = relabel(observer): fixed too
        tied = True
    return count if tied else count * n_out


def _event_outcomes(scenario, name: str) -> int:
    if "@" in name:
        return len(scenario.party(name.split("@", 1)[0]).outcomes)
    for p in scenario.labs:  # a choice party shares its observer's name
        if p.name == name:
            return len(p.outcomes)
    for o in scenario.inner:
        if o.name == name:
            return len(o.outcomes)
    return 1


def estimate_linear(scenario, assumptions) -> SizeEstimate:
    """The size of the plain linear model of *assumptions* (a tuple of :class:`~nogo.theory.Assumption`)."""
    from .theory import Independent  # noqa: PLC0415

    absolute, counterfactual = _present(scenario, assumptions)
    per_lab = [sum(_lab_count(scenario, p, x, absolute, counterfactual) for x in p.settings)
               for p in scenario.parties]
    columns = math.prod(per_lab)
    if scenario.nested:  # chains of nested observers, observers' choices: counted exactly (nogo.events)
        from .events import column_count, present_events  # noqa: PLC0415

        columns = column_count(scenario, present_events(scenario, assumptions))
    n_settings = math.prod(len(p.settings) for p in scenario.parties)
    coordinates = math.prod(len(p.settings) * len(p.outcomes) for p in scenario.parties)
    present = set(scenario.party_names) | absolute
    present |= {f"{p.name}@{x}" for p in scenario.parties if p.name in counterfactual for x in p.settings}
    rows, nonzeros = n_settings, columns
    for a in assumptions:
        for c in a.clauses:
            if not isinstance(c, Independent) or c.given:
                continue
            kept = [e for e in c.events if e in present]
            if not kept:
                continue
            hubs = math.prod(len(p.settings) for p in scenario.parties if p.name not in c.of)
            rows += (n_settings - hubs) * math.prod(_event_outcomes(scenario, e) for e in kept)
            nonzeros += 2 * columns
    return SizeEstimate("linear", rows, columns, nonzeros, coordinates)


def group_cells(scenario, events) -> int:
    """Cells r(e | s) of a response over the present *events* (EventVars), counted from the declaration.

    The count of :func:`estimate_linear`'s columns for a subset of the
    present events, with the same read-out rules: a lab's outcome is fixed by
    the inner observer read out at its setting or by its latent outcome at
    that setting (then the latent one is fixed as well), and the sum over
    settings tuples factorises over labs (a lab without events of the group
    contributes its number of settings).  The mixture route uses it before it
    lists any cell (:mod:`nogo.mixture.guard`).
    """
    names = {e.name for e in events}
    total = 1
    for p in scenario.parties:
        mine = [e for e in events if e.party == p.name]
        if not mine:
            total *= len(p.settings)  # cells are per settings tuple of every party
            continue
        n = len(p.outcomes)
        per_lab = 0
        for x in p.settings:
            count = 1
            party_free = p.name in names
            for e in mine:
                if e.kind == "inner":
                    count *= len(e.outcomes)
                    if p.name in names and scenario.observer(e.name).read_out_at == x:
                        party_free = False
            for e in mine:
                if e.kind == "latent":
                    count *= n
                    if p.name in names and e.setting == x:
                        if party_free:
                            party_free = False  # the outcome equals its latent value at x
                        else:
                            count //= n  # the latent value equals the outcome, fixed by the observer
            per_lab += count * (n if party_free else 1)
        total *= per_lab
    return total


def guard_linear(scenario, label: str, assumptions, max_columns: int | None = None, where: Where | None = None,
                 what: str = "the linear model") -> SizeEstimate:
    """Refuse the plain linear model of *assumptions* above the column limit, before it is built.

    Shared by :func:`guard_bundle` and the mixture route's convex shortcut
    (:mod:`nogo.mixture.guard`), which compiles a hidden-variable bundle as
    the equivalent linear model: the refusal names the size, the assumption
    (or the scenario) responsible and the option that raises the limit.
    """
    max_columns = column_limit(max_columns)
    est = estimate_linear(scenario, assumptions)
    if est.columns > max_columns:
        raise ModelTooLarge(
            f"{what} for '{label}' would have {est.describe()} (limit {max_columns:,} columns): "
            + blame(scenario, assumptions, est.columns), where, _RAISE)
    return est


def _needs_hidden(assumptions) -> bool:
    from .theory import Factorise, Hidden, Independent, Predetermined  # noqa: PLC0415

    return any(isinstance(c, (Hidden, Factorise, Predetermined)) or (isinstance(c, Independent) and c.given)
               for a in assumptions for c in a.clauses)


# -- the guard ----------------------------------------------------------------------------
def column_limit(max_columns: int | None = None) -> int:
    """The limit in force: the option if given, else $NOGO_MAX_COLUMNS, else the default."""
    if max_columns is not None:
        return max_columns
    env = os.environ.get("NOGO_MAX_COLUMNS", "").replace("_", "").replace(",", "")
    return int(env) if env.isdigit() else DEFAULT_MAX_COLUMNS


_RAISE = "raise the limit with --max-columns (or the environment variable NOGO_MAX_COLUMNS) if you mean it"


def guard_bundle(theory, spec, max_columns: int | None = None, **_) -> SizeEstimate:
    """Refuse a bundle whose model would exceed *max_columns*, before anything is built.

    Checks the observed coordinates for every bundle (an inequality and every
    behaviour is a vector over them) and, for bundles without a hidden
    variable, the linear model itself.  Mixture models keep their own guard
    on the cells and extreme responses of each group, from the declaration
    too (:mod:`nogo.mixture.guard`).  Returns the
    estimate; raises :class:`ModelTooLarge` naming the assumption (or the
    scenario size) responsible and the option ``--max-columns``.
    """
    max_columns = column_limit(max_columns)
    label, assumptions = theory.resolve(spec)
    sc = theory.scenario
    est = estimate_linear(sc, assumptions if not _needs_hidden(assumptions) else ())
    where = Where(theory.file, None, f"bundles.{label}" if label in theory.bundles else None)
    if est.coordinates > max_columns:
        raise ModelTooLarge(
            f"the scenario is too large: {scenario_size(sc)} give {_big(est.coordinates)} observed "
            f"probabilities p(outcomes|settings) (limit {max_columns:,})", Where(theory.file),
            _RAISE)
    if _needs_hidden(assumptions):
        return est
    return guard_linear(sc, label, assumptions, max_columns, where)


def guard_coordinates(sc) -> None:
    """Refuse a scenario with more observed probabilities than can be listed (any command, any stage)."""
    n = math.prod(len(p.settings) * len(p.outcomes) for p in sc.parties)
    if n <= DEFAULT_MAX_COORDINATES:  # the common case: no environment lookup
        return
    env = os.environ.get("NOGO_MAX_COORDINATES", "").replace("_", "").replace(",", "")
    limit = int(env) if env.isdigit() else DEFAULT_MAX_COORDINATES
    if n > limit:
        raise ModelTooLarge(
            f"the scenario is too large: {scenario_size(sc)} give {_big(n)} observed probabilities "
            f"p(outcomes|settings) (limit {limit:,})", None,
            "raise the limit with the environment variable NOGO_MAX_COORDINATES if you mean it")


def scenario_size(sc) -> str:
    parts = ", ".join(f"{p.name}: {len(p.settings)} settings x {len(p.outcomes)} outcomes" for p in sc.parties)
    return f"{len(sc.parties)} parties ({parts})" if len(sc.parties) <= 4 else (
        f"{len(sc.parties)} parties with up to {max(len(p.settings) for p in sc.parties)} settings and "
        f"{max(len(p.outcomes) for p in sc.parties)} outcomes")


def blame(sc, assumptions, columns: int) -> str:
    """Which assumption makes the model big: the one whose removal shrinks it most, else the scenario."""
    best, best_cols = None, columns
    for a in assumptions:
        rest = tuple(b for b in assumptions if b is not a)
        cols = estimate_linear(sc, rest).columns
        if cols < best_cols:
            best, best_cols = a, cols
    if best is not None and columns >= 4 * best_cols:
        kinds = sorted({type(c).__name__.lower() for c in best.clauses})
        return (f"assumption '{best.name}' ({', '.join(kinds)}) multiplies it by about "
                f"{_big(max(1, columns // max(1, best_cols)))}: without it {_big(best_cols)} columns; "
                f"the scenario has {scenario_size(sc)}")
    return f"the scenario itself is large: {scenario_size(sc)}"


def guard_moment_matrix(side: int, level, n_parties: int, max_side: int | None = None,
                        where: Where | None = None) -> None:
    """Refuse an NPA moment matrix larger than *max_side* on a side (an SDP's cost grows like side^6)."""
    if max_side is None:
        env = os.environ.get("NOGO_MAX_MOMENT_SIDE", "")
        max_side = int(env) if env.isdigit() else DEFAULT_MAX_MOMENT_SIDE
    if side > max_side:
        raise ModelTooLarge(
            f"the NPA moment matrix at level {level} would be {_big(side)} x {_big(side)} "
            f"(limit {max_side:,} on a side) for {n_parties} parties", where,
            "choose a lower level, or raise the limit with the environment variable NOGO_MAX_MOMENT_SIDE "
            "if you mean it (the solver's time grows with the sixth power of the side)")


def guard_npa_words(n_ops: int, length: int, level, n_parties: int) -> None:
    """Refuse before listing the words of an NPA level whose raw count is out of reach.

    The raw count sum_{l<=k} n_ops^l bounds the side from above; words that
    reduce to the same moment are merged later, so the side itself is
    checked again (:func:`guard_moment_matrix`) once the words are known.
    """
    raw = sum(n_ops ** l for l in range(length + 1))
    if raw > MAX_RAW_WORDS:
        raise ModelTooLarge(
            f"NPA level {level} would list {_big(raw)} operator words ({n_ops} operators of {n_parties} parties, "
            f"products of up to {length}) before equal moments are merged (limit {MAX_RAW_WORDS:,})",
            hint="choose a lower level such as 1, 1+AB or 2")
