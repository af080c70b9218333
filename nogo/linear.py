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
columns are grouped by settings tuple (contiguous ranges), and each
independence clause is one *block*: a key per column (the assignment of the
clause's kept events) and, per settings tuple s off its hub, the rows
"q(kept = k | s) − q(kept = k | base(s)) = 0".  The rows are held in that
form (:class:`CompiledRows`): the exact checks multiply by it directly
(A·x, Aᵀ·y in int64 with overflow bounds), the merge reduction reads its
equality rows off it, and the integer CSR matrix (entries ±1, written as
COO triplets per settings tuple, already in row-major order) is built only
when something asks for it.  No Python code runs per outcome tuple; columns
and row sources are described lazily, on demand.
:func:`nogo.sizes.estimate_linear` gives the size a compile would have,
from the declaration alone (the one estimator, used by the size guards).

Clauses that need a hidden variable (``hidden``, ``factorise``,
``predetermined``, independence ``given`` one) are not linear in q; they
raise :class:`NotLinear` so that the caller can route the bundle to the
mixture model.
"""

from __future__ import annotations

from dataclasses import dataclass

from .errors import InputError, Where
from .events import present_events, project_independence, read_out_notes, read_out_rules
from .lazyseq import LazySeq
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
class LazyColumns(LazySeq):
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


@dataclass
class _Block:
    """One family of rows: normalisation, or one independence clause.

    Its rows, before empty ones are dropped, are numbered ``offset + r*K + k``
    for the r-th settings tuple s of ``nonhub`` and the assignment k of the
    kept events: q(kept = k | s) − q(kept = k | base(s)) = 0.  Normalisation
    is the block with ``key = None``: row s sums q(· | s).
    """

    assumption: str
    kind: str
    clause: int
    kept: tuple[str, ...]
    kept_outcomes: list[tuple[str, ...]]
    nonhub: list[int]  # settings indices s with base(s) != s, in row order
    base: list[int]  # base settings index per settings index
    key: object = None  # np.ndarray int64 per column: assignment of the kept events
    K: int = 1
    offset: int = 0


class CompiledRows:
    """The rows of an array-compiled model, held by their structure rather than as a matrix.

    The exact checks need only ``A·x`` (:meth:`dot_int64`) and ``Aᵀ·y``
    (:meth:`rdot`); both are computed from the blocks directly, in int64
    when a bound rules out overflow (as :class:`~nogo.intarith.IntCSR`
    does), so evidence is checked on the compiled model without building its
    matrix.  :meth:`equal_pairs` tells the reductions which rows are
    q_j − q_k = 0 without a scan.  Any other use (``indptr``, ``take_rows``,
    ``T``, ...) builds the :class:`~nogo.intarith.IntCSR` once and
    delegates to it, so callers see one matrix type.
    """

    def __init__(self, start, col_s, blocks: list[_Block], n_pot: int):
        import numpy as np

        self.start, self.col_s, self.blocks, self.n_pot = start, col_s, blocks, n_pot
        self.n_set = len(start) - 1
        self.size = np.diff(start)
        present = np.zeros(n_pot, dtype=bool)
        present[:self.n_set] = self.size > 0
        nnz, widest = int(self.size.sum()), int(self.size.max(initial=0))
        for b, r, si, row0, ra, rb in self._pieces():
            present[row0 + b.key[ra]] = True
            present[row0 + b.key[rb]] = True
            nnz += (ra.stop - ra.start) + (rb.stop - rb.start)
            widest = max(widest, (ra.stop - ra.start) + (rb.stop - rb.start))
        self.present = present
        self.shape = (int(present.sum()), int(len(col_s)))
        self.nnz, self._widest = nnz, widest
        terms = np.ones(self.n_set, dtype=np.int64)  # entries of Aᵀ per column, by settings tuple
        for b in blocks[1:]:
            for si in b.nonhub:
                terms[si] += 1
                terms[b.base[si]] += 1
        self._terms = int(terms.max(initial=1))
        self._csr = None
        self._used = None
        self._pair = {}

    def __getstate__(self):
        st = dict(self.__dict__)
        st["_csr"], st["_used"] = None, None
        return st

    def __setstate__(self, st):
        self.__dict__.update(st)

    def __getattr__(self, name):
        if name.startswith("_"):
            raise AttributeError(name)
        return getattr(self.matrix(), name)

    def _pieces(self, which=None):
        """(block, r, s, first row id, columns of s, columns of base(s)) for every non-hub s of every block."""
        st = self.start
        for k, b in enumerate(self.blocks):
            if k == 0 or (which is not None and k not in which):
                continue
            for r, si in enumerate(b.nonhub):
                bs = b.base[si]
                yield b, r, si, b.offset + r * b.K, slice(int(st[si]), int(st[si + 1])), \
                    slice(int(st[bs]), int(st[bs + 1]))

    # -- the matrix, when someone needs it -----------------------------------
    def _coo(self, which):
        """Entries (potential row id, column, value) of the blocks *which* (sorted), in row-major order."""
        import numpy as np

        n = len(self.col_s)
        rp, cp, vp = [], [], []
        if 0 in which:
            rp.append(self.col_s.astype(np.int64))
            cp.append(np.arange(n, dtype=np.int64))
            vp.append(np.ones(n, dtype=np.int64))
        for b, r, si, row0, ra, rb in self._pieces(which):
            kk = np.concatenate([b.key[ra], b.key[rb]])
            cc = np.concatenate([np.arange(ra.start, ra.stop, dtype=np.int64),
                                 np.arange(rb.start, rb.stop, dtype=np.int64)])
            vv = np.concatenate([np.ones(ra.stop - ra.start, dtype=np.int64),
                                 -np.ones(rb.stop - rb.start, dtype=np.int64)])
            order = np.argsort(kk * max(n, 1) + cc)
            rp.append(row0 + kk[order])
            cp.append(cc[order])
            vp.append(vv[order])
        if not rp:
            z = np.zeros(0, dtype=np.int64)
            return z, z, z
        return np.concatenate(rp), np.concatenate(cp), np.concatenate(vp)

    def new_ids(self):
        import numpy as np

        return np.cumsum(self.present) - 1

    def matrix(self):
        """The rows as an :class:`~nogo.intarith.IntCSR` (built once)."""
        if self._csr is None:
            from .intarith import IntCSR

            r, c, v = self._coo(set(range(len(self.blocks))))
            self._csr = IntCSR.from_coo(self.new_ids()[r], c, v, self.shape)
        return self._csr

    def rows_of(self, which, new_id=None):
        """(IntCSR of the rows of blocks *which*, their row ids in this matrix)."""
        import numpy as np

        from .intarith import IntCSR

        new_id = self.new_ids() if new_id is None else new_id
        if set(which) == {0}:  # normalisation alone: row s holds the columns of s, already a CSR
            nz = np.flatnonzero(self.size > 0)
            n = self.shape[1]
            indptr = np.concatenate([self.start[:-1][nz], [n]]).astype(np.int64)
            return IntCSR(indptr, np.arange(n, dtype=np.int64), np.ones(n, dtype=np.int64), (len(nz), n)), \
                new_id[nz]
        r, c, v = self._coo(set(which))
        rid = new_id[r]
        mark = np.zeros(self.shape[0], dtype=bool)
        mark[rid] = True
        return IntCSR.from_coo((np.cumsum(mark) - 1)[rid], c, v, (int(mark.sum()), self.shape[1])), \
            np.flatnonzero(mark)

    # -- products for the exact checks ---------------------------------------
    def row_abs_bound(self) -> int:
        return self._widest  # entries are ±1

    def dot_int64(self, x):
        """A @ x (int64; the caller has bounded the result, see :func:`nogo.intarith.matvec`)."""
        import numpy as np

        out = np.zeros(self.n_pot, dtype=np.int64)
        nz = self.size > 0
        if nz.any():
            out[:self.n_set][nz] = np.add.reduceat(x, self.start[:-1][nz])
        for b, r, si, row0, ra, rb in self._pieces():
            np.add.at(out, row0 + b.key[ra], x[ra])
            np.subtract.at(out, row0 + b.key[rb], x[rb])
        return out[self.present]

    def rdot(self, y):
        """Exact Aᵀ y from the structure (int64 with a bound on every sum; else through the matrix)."""
        import numpy as np

        from .intarith import SAFE, max_abs

        if y.dtype == object or max_abs(y) * self._terms >= SAFE:
            return self.matrix().rdot(y)
        yp = np.zeros(self.n_pot, dtype=np.int64)
        yp[self.present] = y
        out = np.repeat(yp[:self.n_set], self.size)
        for b, r, si, row0, ra, rb in self._pieces():
            out[ra] += yp[row0 + b.key[ra]]
            out[rb] -= yp[row0 + b.key[rb]]
        return out

    # -- structure for the reductions and the source map ---------------------
    def _pairwise(self, k: int):
        """Where block k's every row has one entry +1 and one −1 (its kept events name one column in s and one
        in base(s)): per non-hub s, the base column of each column of s; else None."""
        import numpy as np

        if k not in self._pair:
            b = self.blocks[k]
            where: dict[int, object] = {}  # base settings index -> column of base with each key (-1: none)
            match = []
            for _, r, si, row0, ra, rb in self._pieces({k}):
                w = where.get(b.base[si])
                if w is None:
                    kb = b.key[rb]
                    if len(kb) > 1 and int(np.bincount(kb, minlength=b.K).max()) > 1:
                        break
                    w = where[b.base[si]] = np.full(b.K, -1, dtype=np.int64)
                    w[kb] = np.arange(rb.start, rb.stop, dtype=np.int64)
                ka = b.key[ra]
                jb = w[ka]
                # one column per key on each side, the same keys: a bijection (sizes equal, no key twice, none missing)
                if ra.stop - ra.start != rb.stop - rb.start or bool(np.any(jb < 0)) or \
                        (len(ka) > 1 and int(np.bincount(ka, minlength=b.K).max()) > 1):
                    break
                match.append(jb)
            else:
                self._pair[k] = match
                return match
            self._pair[k] = None
        return self._pair[k]

    def equal_pairs(self):
        """The rows q_j − q_k = 0 of whole blocks, read from the structure (see :mod:`nogo.reduce`), or None.

        Returns (u, v, row, alpha, other rows, their ids, classes or None):
        the two columns (u < v), alpha the entry at u; or — when one block
        holds all such rows, so each is a star around the base settings
        tuple's column — u the leaf (entry +1), v its root, and the class
        (the root) of every column.
        """
        import numpy as np

        pw = [k for k in range(1, len(self.blocks)) if self._pairwise(k) is not None]
        if not pw:
            return None
        new_id = self.new_ids()
        ja_p, jb_p, row_p = [], [], []
        for k in pw:
            for (b, r, si, row0, ra, rb), jb in zip(self._pieces({k}), self._pairwise(k)):
                ja_p.append(np.arange(ra.start, ra.stop, dtype=np.int64))
                jb_p.append(jb)
                row_p.append(new_id[row0 + b.key[ra]])
        ja, jb, rows = np.concatenate(ja_p), np.concatenate(jb_p), np.concatenate(row_p)
        del ja_p, jb_p, row_p
        other, ids = self.rows_of([k for k in range(len(self.blocks)) if k not in pw], new_id)
        if len(pw) == 1:  # base(base(s)) = base(s): every edge joins a column to its base column (stars)
            comp = np.arange(self.shape[1], dtype=np.int64)
            comp[ja] = jb
            return ja, jb, rows, np.ones(len(ja), dtype=np.int8), other, ids, comp  # u = the +1 end (a leaf)
        u, v = np.minimum(ja, jb), np.maximum(ja, jb)
        alpha = np.where(u == ja, 1, -1).astype(np.int8)
        return u, v, rows, alpha, other, ids, None

    def difference_rows(self, s: int, s0: int, fixed: dict[str, str]):
        """Rows whose sum is q(fixed | s) − q(fixed | s0), all from one block (its row ids), or None.

        A block whose kept events include every event in *fixed* and whose
        base of s is s0 has, at s, the rows q(kept = k | s) − q(kept = k | s0);
        those with the fixed events' values sum to the difference of
        marginals.  A candidate for an exact check, nothing more.
        """
        import numpy as np

        for b in self.blocks[1:]:
            if s == s0 or b.base[s] != s0 or not all(e in b.kept for e in fixed):
                continue
            ks = np.arange(b.K, dtype=np.int64)
            mask = np.ones(b.K, dtype=bool)
            stride = b.K
            for name, outs in zip(b.kept, b.kept_outcomes):
                stride //= len(outs)
                if name in fixed:
                    if fixed[name] not in outs:
                        return None
                    mask &= (ks // stride) % len(outs) == outs.index(fixed[name])
            pos = b.offset + b.nonhub.index(s) * b.K + ks[mask]
            pos = pos[self.present[pos]]
            return np.searchsorted(self.used(), pos)
        return None

    def used(self):
        import numpy as np

        if self._used is None:
            self._used = np.flatnonzero(self.present)
        return self._used

    def locate(self, rows):
        """(block, settings index, key) of the given rows."""
        import numpy as np

        pos = self.used()[np.asarray(rows, dtype=np.int64)]
        first = np.array([b.offset for b in self.blocks], dtype=np.int64)
        bi = np.searchsorted(first, pos, side="right") - 1
        s = np.zeros(len(pos), dtype=np.int64)
        key = np.zeros(len(pos), dtype=np.int64)
        for k in np.flatnonzero(np.bincount(bi, minlength=len(self.blocks))).tolist():  # (np.unique loads numpy.ma)
            sel = bi == k
            b = self.blocks[k]
            local = pos[sel] - b.offset
            s[sel] = np.asarray(b.nonhub, dtype=np.int64)[local // b.K]
            key[sel] = local % b.K
        return bi, s, key


@dataclass
class LazySources(LazySeq):
    """Row sources of an array-compiled model, written out on demand."""

    scenario: Scenario
    settings: list[tuple[str, ...]]
    all_names: tuple[str, ...]
    rows: CompiledRows

    def __len__(self) -> int:
        return self.rows.shape[0]

    def assumption_of(self, i: int) -> str:
        return self.rows.blocks[int(self.rows.locate([i])[0][0])].assumption

    def count_by_assumption(self, rows) -> dict[str, int]:
        import numpy as np

        bi = self.rows.locate(rows)[0]
        counts = np.bincount(bi, minlength=len(self.rows.blocks))
        out: dict[str, int] = {}
        for b, c in zip(self.rows.blocks, counts.tolist()):
            if c:
                out[b.assumption] = out.get(b.assumption, 0) + c
        return out

    def _one(self, i: int) -> RowSource:
        bi, si, key = (int(v[0]) for v in self.rows.locate([i]))
        b = self.rows.blocks[bi]
        s = self.settings[si]
        if b.kind == "normalisation":
            return RowSource("normalisation", "normalisation", 0, self.all_names,
                             f"sum of q(· | {_settings_text(self.scenario, s)}) = 1")
        vals = []
        for outs in reversed(b.kept_outcomes):
            vals.append(outs[key % len(outs)])
            key //= len(outs)
        vals = vals[::-1]
        base = self.settings[b.base[si]]
        lab = _label(b.kept, vals)
        return RowSource(b.assumption, b.kind, b.clause, b.kept,
                         f"q({lab} | {_settings_text(self.scenario, s)}) = q({lab} | {_settings_text(self.scenario, base)})")


# -- the compiler, stage by stage -------------------------------------------------
def _columns(settings, T, ties):
    """(settings index, outcome-tuple index) of every column, grouped by settings tuple, and the group starts."""
    import numpy as np

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
    return col_s, col_t, np.asarray(start, dtype=np.int64)


def _observation(sc: Scenario, n_set: int, strides, col_s, col_t):
    """Column (s, e) observes p(e[:parties] | s): one entry 1 per column."""
    import numpy as np

    from .intarith import IntCSR

    n_col = len(col_t)
    n_out = 1
    for p in sc.parties:
        n_out *= len(p.outcomes)
    rest = strides[len(sc.parties) - 1] if sc.parties else 1
    coord = col_s.astype(np.int64) * n_out + col_t // rest
    return IntCSR(np.arange(n_col + 1, dtype=np.int64), coord, np.ones(n_col, dtype=np.int64),
                  (n_col, n_set * n_out))


def _readout_notes(sc: Scenario, events: list[EventVar]) -> list[str]:
    names = {e.name for e in events}
    notes = []
    for o in sc.inner:
        if o.name in names and o.read_out_at is not None and not sc.nested:
            notes.append(f"read-out: {o.lab}'s outcome equals {o.name}'s when {o.lab}'s setting is {o.read_out_at}")
    notes += read_out_notes(sc, events)  # nested observers: chains resolved
    for p in sc.parties:
        if f"{p.name}@{p.settings[0]}" in names:
            notes.append(f"counterfactual outcomes {p.name}@x exist jointly; {p.name} = {p.name}@x at setting x")
    return notes


def _blocks(sc: Scenario, assumptions, events, T, col_t, notes: list[str]) -> tuple[list[_Block], int]:
    """Normalisation and one block per independence clause (after projection); the potential row count."""
    import numpy as np

    names = [e.name for e in events]
    settings = sc.setting_tuples()
    s_index = {s: i for i, s in enumerate(settings)}
    n_set = len(settings)
    blocks = [_Block("normalisation", "normalisation", 0, tuple(names), [], list(range(n_set)), list(range(n_set)))]
    offset = n_set
    for a in assumptions:
        for ci, c in enumerate(a.clauses):
            if not isinstance(c, Independent):
                continue
            pr = project_independence(sc, c.events, c.of, names, a.name, notes)
            if pr is None:
                continue
            K = 1
            key = np.zeros(len(T), dtype=np.int64)
            for i in pr.idx:  # mixed radix over the kept events, first one most significant
                key *= len(events[i].outcomes)
                key += T[:, i]
                K *= len(events[i].outcomes)
            key = key[col_t]  # per outcome tuple first, then one gather per column
            base = [s_index[pr.base[s]] for s in settings]
            nonhub = [si for si in range(n_set) if base[si] != si]
            blocks.append(_Block(a.name, "independent", ci, pr.kept, [events[i].outcomes for i in pr.idx],
                                 nonhub, base, key, K, offset))
            offset += len(nonhub) * K
    return blocks, offset


def compile_linear(theory: Theory, spec: str | list[str]) -> LinearModel:
    """Compile the bundle *spec* (a bundle name or assumption names) of *theory*."""
    import numpy as np

    label, assumptions = theory.resolve(spec)
    sc = theory.scenario
    _check_linear(theory, assumptions)
    events = present_events(sc, assumptions)
    names = tuple(e.name for e in events)
    notes = list(refuse_support_only(theory, assumptions, list(names)))  # possibilistic clauses: implied or refused
    settings = sc.setting_tuples()
    T, strides = _digits([len(e.outcomes) for e in events])
    col_s, col_t, start = _columns(settings, T, _ties(sc, events))
    O = _observation(sc, len(settings), strides, col_s, col_t)
    notes += _readout_notes(sc, events)
    blocks, n_pot = _blocks(sc, assumptions, events, T, col_t, notes)
    rows = CompiledRows(start, col_s, blocks, n_pot)
    m = rows.shape[0]
    rhs_num = np.zeros(m, dtype=np.int64)
    rhs_num[:int(rows.present[:len(settings)].sum())] = 1  # normalisation rows come first
    one = np.ones(1, dtype=np.int64)
    arrays = ModelArrays(rows, np.broadcast_to(one, (m,)), rhs_num, np.broadcast_to(one, (m,)), O, 1)
    columns = LazyColumns(settings, names, [e.outcomes for e in events], strides, col_s, col_t)
    sources = LazySources(sc, settings, names, rows)
    return LinearModel(sc, label, tuple(a.name for a in assumptions), columns, None, None, sources, None, notes,
                       arrays=arrays)
