"""The compiled constraint system that every backend consumes.

A :class:`LinearModel` is ``rows · q = rhs, q >= 0`` over columns that stand
for entries of a hidden joint distribution (or, for mixture models, weights
of extreme responses), together with

* a *source map*: each row's :class:`RowSource` names the assumption, the
  clause and the events it came from, so results can speak in the user's
  names and never in row numbers;
* an *observation map*: each column's contribution to the observed behaviour
  p(a|s) in full probability coordinates (``scenario.coordinates()``).

Two equivalent storages, each made from the other on first use:

* **arrays** (:class:`ModelArrays`): the rows as a CSR matrix of int64
  numerators with one denominator per row, the right-hand side as integer
  numerator/denominator arrays and the observation map as a CSR matrix of
  numerators over one denominator.  The array compiler (:mod:`nogo.linear`),
  the reductions, the LP and the exact checks work on these;
* **lists**: ``rows`` (one ``{column: Fraction}`` dict per row), ``rhs``
  (Fractions), ``observe`` (one ``{coordinate: Fraction}`` dict per column),
  ``columns`` and ``sources`` (sequences, possibly lazy: an entry is
  described only when asked for).  The mixture compiler and older callers
  build and read these.

All numbers are exact; floating-point copies are made only for the LP
solver.  Models are plain picklable data, so an oracle call is a pure
function of (model, direction) and can be shipped to another process.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import Any, Sequence

from .inequality import Coord, Inequality
from .scenario import Scenario


@dataclass(frozen=True)
class RowSource:
    """Where a row came from, in the user's names."""

    assumption: str  # assumption name, or "normalisation"
    kind: str  # "independent", "normalisation", "mixture", ...
    clause: int  # index of the clause inside the assumption (0-based)
    events: tuple[str, ...]  # the events the row speaks of
    detail: str  # the row as a person would write it


@dataclass(frozen=True)
class Column:
    """One unknown of the model.

    For the plain linear model it is q(e | s): ``settings`` s and the joint
    assignment ``values`` of the present ``events``.  Mixture models use
    ``label`` to describe a response and its weight.
    """

    settings: tuple[str, ...] | None
    events: tuple[str, ...]
    values: tuple[str, ...]
    label: str = ""

    def describe(self, scenario: Scenario) -> str:
        if self.label:
            return self.label
        ev = ", ".join(f"{e}={v}" for e, v in zip(self.events, self.values))
        st = ", ".join(f"{p}={x}" for p, x in zip(scenario.party_names, self.settings or ()))
        return f"q({ev} | {st})"


@dataclass
class ModelArrays:
    """The model as integer arrays (see the module docstring).

    Row i of the system is ``A[i] / row_den[i] · q = rhs_num[i] / rhs_den[i]``;
    column j observes ``O[j] / obs_den`` in full probability coordinates.
    """

    A: Any  # nogo.intarith.IntCSR, m x n
    row_den: Any  # np.ndarray int64 (m,)
    rhs_num: Any  # np.ndarray int64 (m,)
    rhs_den: Any  # np.ndarray int64 (m,)
    O: Any  # nogo.intarith.IntCSR, n x n_coord
    obs_den: int = 1

    @property
    def shape(self) -> tuple[int, int]:
        return self.A.shape

    def rhs_fractions(self) -> list[Fraction]:
        return [Fraction(int(a), int(b)) for a, b in zip(self.rhs_num, self.rhs_den)]


def arrays_from_lists(rows, rhs, observe, n_col: int, n_coord: int) -> ModelArrays:
    """Integer arrays of a model given as dict rows (one pass over the entries)."""
    import numpy as np

    from .intarith import IntCSR, as_int, lcm_all

    def csr(dict_rows, n):
        dens: list[int] = []
        indptr = [0]
        idx: list[int] = []
        val: list[int] = []
        for row in dict_rows:
            d = lcm_all({Fraction(v).denominator for v in row.values()})
            dens.append(d)
            for j, v in row.items():
                v = Fraction(v)
                if v:
                    idx.append(j)
                    val.append(v.numerator * (d // v.denominator))
            indptr.append(len(idx))
        rid = np.repeat(np.arange(len(dict_rows), dtype=np.int64), np.diff(np.array(indptr, dtype=np.int64)))
        # entries beyond int64 (e.g. rows that pin a point with large denominators) stay Python ints
        M = IntCSR.from_coo(rid, np.array(idx, dtype=np.int64), as_int(np.array(val, dtype=object)),
                            (len(dict_rows), n))
        return M, as_int(np.array(dens, dtype=object))

    A, row_den = csr(rows, n_col)
    fr = [Fraction(b) for b in rhs]
    rhs_num = as_int(np.array([f.numerator for f in fr], dtype=object))
    rhs_den = as_int(np.array([f.denominator for f in fr], dtype=object))
    O, oden = csr(observe, n_coord)
    common = lcm_all(set(oden.tolist()))
    if common != 1:
        k = np.repeat((common // oden).astype(np.int64), np.diff(O.indptr))
        O = IntCSR(O.indptr, O.indices, O.data * k, O.shape)
    return ModelArrays(A, row_den, rhs_num, rhs_den, O, int(common))


class LinearModel:
    """rows · q = rhs, q >= 0 with its source map and observation map.

    Construct with lists (``LinearModel(scenario, label, assumptions, columns,
    rows, rhs, sources, observe, notes, kind=..., extra=...)``) or with
    ``arrays=`` and ``rows = rhs = observe = None``; each storage is made
    from the other on first use, so every attribute below always works.
    """

    def __init__(self, scenario: Scenario, label: str, assumptions: tuple[str, ...], columns: Sequence[Column],
                 rows: list[dict[int, Fraction]] | None, rhs: list[Fraction] | None, sources: Sequence[RowSource],
                 observe: list[dict[int, Fraction]] | None, notes: list[str] | None = None, kind: str = "linear",
                 extra: dict[str, Any] | None = None, arrays: ModelArrays | None = None):
        if arrays is None and (rows is None or rhs is None or observe is None):
            raise ValueError("a model needs its rows, right-hand side and observation map, as lists or arrays")
        self.scenario = scenario
        self.label = label
        self.assumptions = assumptions
        self.columns = columns
        self._rows = rows
        self._rhs = rhs
        self.sources = sources
        self._observe = observe
        self.notes = list(notes) if notes is not None else []
        self.kind = kind
        self.extra = extra if extra is not None else {}
        self._arrays = arrays

    def __getstate__(self):
        # caches (reductions, transposes, costs, fingerprints) are rebuilt on demand: keep payloads small
        st = dict(self.__dict__)
        st["extra"] = {k: v for k, v in self.extra.items()
                       if not ((isinstance(k, str) and k.startswith("_")) or (isinstance(k, tuple) and k and
                                                                                str(k[0]).startswith("_")))}
        return st

    def __setstate__(self, st):
        self.__dict__.update(st)

    def __repr__(self) -> str:
        m, n = self.shape
        return f"LinearModel({self.label!r}, kind={self.kind}, {m} rows x {n} columns)"

    # -- the two storages --------------------------------------------------
    @property
    def arrays(self) -> ModelArrays:
        if self._arrays is None:
            self._arrays = arrays_from_lists(self._rows, self._rhs, self._observe, len(self.columns),
                                             len(self.scenario.coordinates()))
        return self._arrays

    @property
    def rows(self) -> list[dict[int, Fraction]]:
        if self._rows is None:
            a = self.arrays
            A = a.A
            ip, ix, dv = A.indptr, A.indices.tolist(), A.data.tolist()
            out = []
            for i, d in enumerate(a.row_den.tolist()):
                seg = range(ip[i], ip[i + 1])
                if d == 1:
                    out.append({ix[k]: Fraction(dv[k]) for k in seg})
                else:
                    out.append({ix[k]: Fraction(dv[k], d) for k in seg})
            self._rows = out
        return self._rows

    @rows.setter
    def rows(self, value) -> None:
        self._rows, self._arrays = value, None
        for k in ("_csr", "_AT", "_reduced"):
            self.extra.pop(k, None)

    @property
    def rhs(self) -> list[Fraction]:
        if self._rhs is None:
            self._rhs = self.arrays.rhs_fractions()
        return self._rhs

    @rhs.setter
    def rhs(self, value) -> None:
        self._rhs, self._arrays = value, None

    @property
    def observe(self) -> list[dict[int, Fraction]]:
        if self._observe is None:
            a = self.arrays
            O, d = a.O, a.obs_den
            ip, ix, dv = O.indptr, O.indices.tolist(), O.data.tolist()
            self._observe = [{ix[k]: Fraction(dv[k], d) for k in range(ip[j], ip[j + 1])}
                             for j in range(O.shape[0])]
        return self._observe

    @observe.setter
    def observe(self, value) -> None:
        self._observe, self._arrays = value, None

    @property
    def shape(self) -> tuple[int, int]:
        if self._arrays is not None:
            return self._arrays.shape
        return len(self._rows), len(self.columns)

    def transposed(self):
        """The row matrix transposed (CSR), made once."""
        at = self.extra.get("_AT")
        if at is None:
            at = self.arrays.A.T
            self.extra["_AT"] = at
        return at

    # -- functionals and points ------------------------------------------
    def cost_vector(self, ineq: Inequality):
        """The inequality's left side as an exact :class:`~nogo.intarith.ExactVector` over the columns."""
        import numpy as np

        from .intarith import ExactVector, lcm_all, matvec

        key = ("_cost", tuple(sorted(ineq.coeffs.items())))
        got = self.extra.get(key)
        if got is not None:
            return got
        index = self.extra.get("_coord_index")
        if index is None:
            index = self.extra["_coord_index"] = {c: i for i, c in enumerate(self.scenario.coordinates())}
        items = [(index[c], Fraction(v)) for c, v in ineq.coeffs.items() if v]
        wden = lcm_all({v.denominator for _, v in items})
        W = np.zeros(len(index), dtype=object)
        for i, v in items:
            W[i] = v.numerator * (wden // v.denominator)
        a = self.arrays
        C = matvec(a.O, W.astype(np.int64) if max((abs(int(x)) for x in W), default=0) < 2 ** 40 else W)
        vec = ExactVector(C, wden * a.obs_den).normalised()
        if len([k for k in self.extra if isinstance(k, tuple) and k and k[0] == "_cost"]) > 64:
            for k in [k for k in self.extra if isinstance(k, tuple) and k and k[0] == "_cost"]:
                del self.extra[k]
        self.extra[key] = vec
        return vec

    def cost(self, ineq: Inequality) -> list[Fraction]:
        """The inequality's left side as a linear function of the columns."""
        return list(self.cost_vector(ineq))

    def behaviour(self, point) -> dict[Coord, Fraction]:
        """Observed behaviour p(a|s) of a point of the model (a list of Fractions or an ExactVector)."""
        import numpy as np

        from .intarith import ExactVector, matvec

        coords = self.scenario.coordinates()
        x = point if isinstance(point, ExactVector) else ExactVector.from_fractions(list(point))
        a = self.arrays
        ot = self.extra.get("_OT")
        if ot is None:
            ot = self.extra["_OT"] = a.O.T
        vals = matvec(ot, x.num)
        den = x.den * a.obs_den
        return {coords[i]: Fraction(int(v), den) for i, v in enumerate(np.asarray(vals).tolist())}
