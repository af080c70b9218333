"""Array compiler: a bundle of linear assumptions into one :class:`LinearModel`.

Semantics (DESIGN.md §3).  The unknown is a conditional joint distribution
q(e | s) over the *present* event variables e for every settings tuple s:

* party outcomes are always present;
* an inner observer's outcome is present when some assumption of the bundle
  declares it absolute; its read-out rule then forces q = 0 wherever the
  party's setting is the read-out setting and the party's outcome differs
  from the (relabelled) observer's — those columns are never built;
* latent outcomes ``A@x`` are present under joint existence of
  counterfactual outcomes for A, with the read-out rule "A = A@x when A's
  setting is x";
* "events E independent of settings S" equates the marginal of E at s with
  the marginal at s', for every s, s' that differ only in the settings S
  (the *rule of projection*: only the present events of E are kept; an
  assumption that mentions no present event adds nothing).

Method: a joint assignment is its index in the mixed-radix numbering of
``itertools.product`` over the events' outcomes; read-out rules become
vectorised masks on the digit matrix (one per pattern of active read-outs),
columns are grouped by settings tuple (contiguous ranges), and every row is
written as integer COO triplets (entries are ±1), so no Python code runs per
outcome tuple.  Columns and row sources are described lazily, on demand.
:func:`nogo.sizes.estimate_linear` gives the size a compile would have,
from the declaration alone (the one estimator, used by the size guards).

Clauses that need a hidden variable (``hidden``, ``factorise``,
``predetermined``, independence ``given`` one) are not linear in q; they
raise :class:`NotLinear` so that the caller can route the bundle to the
mixture model.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

from .errors import InputError, Where
from .events import present_events, project_independence, read_out_notes, read_out_rules
from .model import Column, LinearModel, ModelArrays, RowSource
from .scenario import EventVar, Scenario
from .supports import refuse_support_only
from .theory import Factorise, Hidden, Independent, Predetermined, Theory


class NotLinear(InputError):
    """The bundle uses a kind that the plain linear model cannot express."""


def _label(events, values) -> str:
    return ", ".join(f"{e}={v}" for e, v in zip(events, values))


def _settings_text(sc: Scenario, s) -> str:
    return ", ".join(f"{p}={x}" for p, x in zip(sc.party_names, s))


def _check_linear(theory: Theory, assumptions) -> None:
    for a in assumptions:
        for c in a.clauses:
            if isinstance(c, (Hidden, Factorise, Predetermined)) or (isinstance(c, Independent) and c.given):
                raise NotLinear(f"assumption '{a.name}' needs a hidden variable; the plain linear model cannot hold it",
                                Where(theory.file, a.line, f"assumptions.{a.name}"))


# -- the digit matrix and read-out masks ---------------------------------------
def _ties(sc: Scenario, events: list[EventVar]):
    """Read-out rules as (target position, source position, map source index -> target index, when)."""
    pos = {ev.name: i for i, ev in enumerate(events)}
    return [(pos[r.target], pos[r.source], r.shown, r.when) for r in read_out_rules(sc, events)]


def _digits(dims: list[int]):
    import numpy as np

    n = 1
    for d in dims:
        n *= d
    strides = [1] * len(dims)
    for k in range(len(dims) - 2, -1, -1):
        strides[k] = strides[k + 1] * dims[k + 1]
    ar = np.arange(n, dtype=np.int64)
    dt = np.int8 if max(dims, default=1) < 127 else np.int32
    T = np.empty((n, len(dims)), dtype=dt)
    for k, (d, st) in enumerate(zip(dims, strides)):
        T[:, k] = (ar // st) % d
    return T, strides


@dataclass
class LazyColumns(Sequence):
    """The columns q(e | s) of an array-compiled model, described on demand."""

    settings: list[tuple[str, ...]]
    names: tuple[str, ...]
    outcomes: list[tuple[str, ...]]
    strides: list[int]
    col_s: object  # np.ndarray: settings index per column
    col_t: object  # np.ndarray: outcome-tuple index per column

    def __len__(self) -> int:
        return len(self.col_s)

    def _one(self, j: int) -> Column:
        t = int(self.col_t[j])
        vals = tuple(outs[(t // st) % len(outs)] for outs, st in zip(self.outcomes, self.strides))
        return Column(self.settings[int(self.col_s[j])], self.names, vals)

    def __getitem__(self, j):
        if isinstance(j, slice):
            return [self._one(i) for i in range(*j.indices(len(self)))]
        if j < 0:
            j += len(self)
        if not 0 <= j < len(self):
            raise IndexError(j)
        return self._one(j)


@dataclass
class _Block:
    """One family of rows: normalisation, or one independence clause."""

    assumption: str
    kind: str
    clause: int
    kept: tuple[str, ...]
    kept_outcomes: list[tuple[str, ...]]
    nonhub: list[int]  # settings indices s with base(s) != s, in row order
    base: list[int]  # base settings index per settings index


@dataclass
class LazySources(Sequence):
    """Row sources of an array-compiled model, written out on demand."""

    scenario: Scenario
    settings: list[tuple[str, ...]]
    all_names: tuple[str, ...]
    blocks: list[_Block]
    row_block: object  # np.ndarray int32
    row_s: object  # np.ndarray int32: settings index
    row_key: object  # np.ndarray int64: assignment of the kept events

    def __len__(self) -> int:
        return len(self.row_block)

    def assumption_of(self, i: int) -> str:
        return self.blocks[int(self.row_block[i])].assumption

    def count_by_assumption(self, rows) -> dict[str, int]:
        import numpy as np

        counts = np.bincount(np.asarray(self.row_block)[rows], minlength=len(self.blocks))
        out: dict[str, int] = {}
        for b, c in zip(self.blocks, counts.tolist()):
            if c:
                out[b.assumption] = out.get(b.assumption, 0) + c
        return out

    def _one(self, i: int) -> RowSource:
        b = self.blocks[int(self.row_block[i])]
        si = int(self.row_s[i])
        s = self.settings[si]
        if b.kind == "normalisation":
            return RowSource("normalisation", "normalisation", 0, self.all_names,
                             f"sum of q(· | {_settings_text(self.scenario, s)}) = 1")
        key = int(self.row_key[i])
        vals = []
        for outs in reversed(b.kept_outcomes):
            vals.append(outs[key % len(outs)])
            key //= len(outs)
        vals = vals[::-1]
        base = self.settings[b.base[si]]
        lab = _label(b.kept, vals)
        return RowSource(b.assumption, b.kind, b.clause, b.kept,
                         f"q({lab} | {_settings_text(self.scenario, s)}) = q({lab} | {_settings_text(self.scenario, base)})")

    def __getitem__(self, i):
        if isinstance(i, slice):
            return [self._one(k) for k in range(*i.indices(len(self)))]
        if i < 0:
            i += len(self)
        if not 0 <= i < len(self):
            raise IndexError(i)
        return self._one(i)


# -- the compiler ---------------------------------------------------------------
def compile_linear(theory: Theory, spec: str | list[str]) -> LinearModel:
    """Compile the bundle *spec* (a bundle name or assumption names) of *theory*."""
    import numpy as np

    from .intarith import IntCSR

    label, assumptions = theory.resolve(spec)
    sc = theory.scenario
    _check_linear(theory, assumptions)
    events = present_events(sc, assumptions)
    names = tuple(e.name for e in events)
    support_notes = refuse_support_only(theory, assumptions, list(names))  # possibilistic clauses: implied or refused
    settings = sc.setting_tuples()
    s_index = {s: i for i, s in enumerate(settings)}
    n_party = len(sc.parties)
    dims = [len(e.outcomes) for e in events]
    T, strides = _digits(dims)
    ties = _ties(sc, events)

    # columns: the outcome tuples that obey the read-outs active at each settings tuple
    masks: dict[tuple, np.ndarray] = {}
    col_s_parts, col_t_parts, start = [], [], [0]
    for si, s in enumerate(settings):
        active = tuple(i for i, (_, _, _, when) in enumerate(ties) if all(s[pi] == at for pi, at in when))
        kept = masks.get(active)
        if kept is None:
            m = np.ones(len(T), dtype=bool)
            for i in active:
                lab, k, relabel, _ = ties[i]
                m &= T[:, lab] == np.asarray(relabel, dtype=T.dtype)[T[:, k]]
            kept = masks[active] = np.flatnonzero(m)
        col_t_parts.append(kept)
        col_s_parts.append(np.full(len(kept), si, dtype=np.int32))
        start.append(start[-1] + len(kept))
    col_t = np.concatenate(col_t_parts) if col_t_parts else np.zeros(0, dtype=np.int64)
    col_s = np.concatenate(col_s_parts) if col_s_parts else np.zeros(0, dtype=np.int32)
    n_col = len(col_t)

    # observation map: column (s, e) observes p(e[:parties] | s)
    n_out = 1
    for p in sc.parties:
        n_out *= len(p.outcomes)
    rest = strides[n_party - 1] if n_party else 1
    coord = col_s.astype(np.int64) * n_out + col_t // rest
    O = IntCSR(np.arange(n_col + 1, dtype=np.int64), coord, np.ones(n_col, dtype=np.int64),
               (n_col, len(settings) * n_out))

    notes: list[str] = list(support_notes)
    for o in sc.inner:
        if o.name in names and o.read_out_at is not None and not sc.nested:
            notes.append(f"read-out: {o.lab}'s outcome equals {o.name}'s when {o.lab}'s setting is {o.read_out_at}")
    notes += read_out_notes(sc, events)  # nested observers: chains resolved
    for p in sc.parties:
        if f"{p.name}@{p.settings[0]}" in names:
            notes.append(f"counterfactual outcomes {p.name}@x exist jointly; {p.name} = {p.name}@x at setting x")

    # rows, as COO triplets with row ids in the order rows are written
    r_parts = [col_s.astype(np.int64)]
    c_parts = [np.arange(n_col, dtype=np.int64)]
    v_parts = [np.ones(n_col, dtype=np.int64)]
    blocks = [_Block("normalisation", "normalisation", 0, names, [], list(range(len(settings))),
                     list(range(len(settings))))]
    block_of_offset = [(0, len(settings), 0)]  # (first row id, row count, block)
    offset = len(settings)
    for a in assumptions:
        for ci, c in enumerate(a.clauses):
            if not isinstance(c, Independent):
                continue
            pr = project_independence(sc, c.events, c.of, list(names), a.name, notes)
            if pr is None:
                continue
            idx = list(pr.idx)
            K = 1
            kstr = []
            for i in reversed(idx):
                kstr.append(K)
                K *= dims[i]
            kstr = kstr[::-1]
            key = np.zeros(n_col, dtype=np.int64)
            for i, st in zip(idx, kstr):
                key += T[col_t, i].astype(np.int64) * st
            base = [s_index[pr.base[s]] for s in settings]
            nonhub = [si for si in range(len(settings)) if base[si] != si]
            for r, si in enumerate(nonhub):
                row0 = offset + r * K
                a0, a1 = start[si], start[si + 1]
                b0, b1 = start[base[si]], start[base[si] + 1]
                # this settings tuple's rows in row-major order (so the matrix needs no global sort)
                kk = np.concatenate([key[a0:a1], key[b0:b1]])
                cc = np.concatenate([np.arange(a0, a1, dtype=np.int64), np.arange(b0, b1, dtype=np.int64)])
                vv = np.concatenate([np.ones(a1 - a0, dtype=np.int64), -np.ones(b1 - b0, dtype=np.int64)])
                order = np.argsort(kk * n_col + cc)
                r_parts.append(row0 + kk[order])
                c_parts.append(cc[order])
                v_parts.append(vv[order])
            blocks.append(_Block(a.name, "independent", ci, pr.kept, [events[i].outcomes for i in idx],
                                 nonhub, base))
            block_of_offset.append((offset, len(nonhub) * K, len(blocks) - 1))
            offset += len(nonhub) * K
    r = np.concatenate(r_parts)
    c = np.concatenate(c_parts)
    v = np.concatenate(v_parts)
    present = np.zeros(offset, dtype=bool)  # rows with no entry at all are left out (as 0 = 0)
    present[r] = True
    used = np.flatnonzero(present)
    new_id = np.cumsum(present) - 1
    A = IntCSR.from_coo(new_id[r], c, v, (len(used), n_col))
    # row sources: block, settings index and key of each kept row
    row_block = np.zeros(len(used), dtype=np.int32)
    row_s = np.zeros(len(used), dtype=np.int32)
    row_key = np.zeros(len(used), dtype=np.int64)
    for first, count, b in block_of_offset:
        lo, hi = np.searchsorted(used, [first, first + count])
        local = used[lo:hi] - first
        row_block[lo:hi] = b
        if b == 0:
            row_s[lo:hi] = local
        else:
            K = 1
            for outs in blocks[b].kept_outcomes:
                K *= len(outs)
            row_s[lo:hi] = np.asarray(blocks[b].nonhub, dtype=np.int32)[local // K]
            row_key[lo:hi] = local % K
    m = len(used)
    rhs_num = (row_block == 0).astype(np.int64)
    arrays = ModelArrays(A, np.ones(m, dtype=np.int64), rhs_num, np.ones(m, dtype=np.int64), O, 1)
    columns = LazyColumns(settings, names, [e.outcomes for e in events], strides, col_s, col_t)
    sources = LazySources(sc, settings, names, blocks, row_block, row_s, row_key)
    return LinearModel(sc, label, tuple(a.name for a in assumptions), columns, None, None, sources, None, notes,
                       arrays=arrays)
