"""Exact integer arithmetic on arrays: the evidence checks' number layer.

Rationals are held as an integer numerator array with one common
denominator (:class:`ExactVector`); matrices as :class:`IntCSR` arrays of integer
numerators.  Products are exact: int64 when a bound on the result proves
that no entry can overflow, otherwise the vector is split into 20-bit limbs
whose int64 products are recombined as Python integers.  No floating point
enters any result here.
"""

from __future__ import annotations

import math
from fractions import Fraction
from typing import Iterable, Iterator, Sequence

import numpy as np

SAFE = 2 ** 62
_LIMB = 20


def lcm_all(values: Iterable[int]) -> int:
    out = 1
    for v in values:
        v = int(v)
        if v != 1:
            out = out * v // math.gcd(out, v)
    return out


def fits_int64(a: np.ndarray) -> bool:
    if a.dtype != object:
        return True
    if a.size == 0:
        return True
    return max(abs(int(a.max())), abs(int(a.min()))) < SAFE


def as_int(a) -> np.ndarray:
    """int64 when every entry fits, else an object array of Python ints."""
    a = np.asarray(a)
    if a.dtype == object:
        return a.astype(np.int64) if fits_int64(a) else a
    return a.astype(np.int64, copy=False)


def max_abs(a: np.ndarray) -> int:
    if a.size == 0:
        return 0
    return max(abs(int(a.max())), abs(int(a.min())))  # two reductions, no |a| copy (and exact for Python ints)


class ExactVector(Sequence):
    """An exact rational vector: ``num / den`` with integer ``num`` and ``den > 0``.

    Behaves as a read-only sequence of :class:`Fraction` for code written
    against lists; the checks use ``num`` and ``den`` directly.
    """

    __slots__ = ("num", "den")

    def __init__(self, num, den: int = 1):
        den = int(den)
        if den <= 0:
            raise ValueError("denominator must be positive")
        self.num = as_int(num)
        self.den = den

    @classmethod
    def from_fractions(cls, values: Sequence) -> "ExactVector":
        fr = [v if isinstance(v, Fraction) else Fraction(v) for v in values]
        den = lcm_all({f.denominator for f in fr})
        num = np.array([f.numerator * (den // f.denominator) for f in fr], dtype=object) if fr else \
            np.zeros(0, dtype=np.int64)
        return cls(num, den)

    @classmethod
    def zeros(cls, n: int) -> "ExactVector":
        return cls(np.zeros(n, dtype=np.int64), 1)

    def __len__(self) -> int:
        return len(self.num)

    def __getitem__(self, i):
        if isinstance(i, slice):
            return [Fraction(int(x), self.den) for x in self.num[i]]
        return Fraction(int(self.num[i]), self.den)

    def __iter__(self) -> Iterator[Fraction]:
        d = self.den
        return (Fraction(int(x), d) for x in self.num)

    def __repr__(self) -> str:
        return f"ExactVector(n={len(self)}, nonzero={len(self.nonzero())}, den={self.den})"

    def __eq__(self, other) -> bool:
        if isinstance(other, ExactVector):
            return len(self) == len(other) and bool(np.all(self.num * other.den == other.num * self.den))
        try:
            return list(self) == list(other)
        except TypeError:
            return NotImplemented

    def nonzero(self) -> np.ndarray:
        return np.flatnonzero(self.num != 0)

    def fractions(self) -> list[Fraction]:
        return list(self)

    def scaled_to(self, den: int) -> np.ndarray:
        """Numerators over the multiple *den* of this vector's denominator."""
        k = int(den) // self.den
        if k * self.den != int(den):
            raise ValueError("not a multiple of the denominator")
        return mul(self.num, k)

    def normalised(self) -> "ExactVector":
        if len(self) == 0:
            return ExactVector(self.num, 1)
        nz = self.num[self.num != 0]
        g = self.den
        for x in nz.tolist():
            g = math.gcd(g, int(x))
            if g == 1:
                break
        if g == 1:
            return self
        return ExactVector(as_int(self.num // g), self.den // g)


def mul(a: np.ndarray, k: int) -> np.ndarray:
    """Exact a * k (object dtype when int64 could overflow)."""
    k = int(k)
    if k == 1:
        return a
    if a.dtype != object and max_abs(a) * abs(k) < SAFE:
        return a * k
    return as_int(a.astype(object) * k)


def matvec(A: "IntCSR", x: np.ndarray) -> np.ndarray:
    """Exact A @ x for an integer CSR matrix and an integer vector."""
    bound = A.row_abs_bound() * max_abs(x)
    if x.dtype != object and bound < SAFE:
        return A.dot_int64(x)
    xo = x.astype(object)
    out = np.zeros(A.shape[0], dtype=object)
    for part, sign in ((np.where(xo > 0, xo, 0), 1), (np.where(xo < 0, -xo, 0), -1)):
        shift = 0
        while any(part):
            limb = np.array([int(v) & ((1 << _LIMB) - 1) for v in part], dtype=np.int64)
            out = out + A.dot_int64(limb).astype(object) * (sign << shift)
            part = np.array([int(v) >> _LIMB for v in part], dtype=object)
            shift += _LIMB
    return as_int(out)


class IntCSR:
    """A sparse integer matrix in compressed rows (numpy only; scipy.sparse costs ~0.4 s to import).

    ``indptr`` (int64, m+1), ``indices`` (int64 column ids, sorted within
    each row, no repeats), ``data`` (int64, no zeros).  Products are exact
    int64 sums; :func:`matvec` guards against overflow.
    """

    __slots__ = ("indptr", "indices", "data", "shape", "_bound")

    def __init__(self, indptr, indices, data, shape):
        self.indptr = np.asarray(indptr, dtype=np.int64)
        self.indices = np.asarray(indices, dtype=np.int64)
        self.data = np.asarray(data, dtype=np.int64)
        self.shape = (int(shape[0]), int(shape[1]))
        self._bound = None

    def __getstate__(self):
        return (self.indptr, self.indices, self.data, self.shape)

    def __setstate__(self, st):
        self.indptr, self.indices, self.data, self.shape = st
        self._bound = None

    @classmethod
    def from_coo(cls, r, c, v, shape) -> "IntCSR":
        """Entries (r, c, v); repeated positions are summed and zeros dropped."""
        r = np.asarray(r, dtype=np.int64)
        c = np.asarray(c, dtype=np.int64)
        v = as_int(v)  # int64, or Python ints where an entry does not fit
        m, n = int(shape[0]), int(shape[1])
        if len(r) > 1:
            dr = r[1:] - r[:-1]
            if bool(np.all((dr > 0) | ((dr == 0) & (c[1:] > c[:-1])))) and bool(np.all(v != 0)):
                indptr = np.zeros(m + 1, dtype=np.int64)  # already in row-major order, no repeats
                np.cumsum(np.bincount(r, minlength=m), out=indptr[1:])
                return cls(indptr, c, v, (m, n))
        key = r * max(n, 1) + c
        if v.dtype != object and 0 < m * n <= 2 * len(key) + 4096 and max_abs(v) * len(key) < 2 ** 52:
            # dense enough: sum repeated positions by counting (float sums of integers below 2**52 are exact)
            if int(v.min()) == int(v.max()) == 1:  # all ones: plain counts (no float weights)
                dense = np.bincount(key, minlength=m * n)
            else:
                dense = np.rint(np.bincount(key, weights=v.astype(float), minlength=m * n)).astype(np.int64)
            key = np.flatnonzero(dense)
            v = dense[key]
            rows = key // n
            indptr = np.zeros(m + 1, dtype=np.int64)
            np.cumsum(np.bincount(rows, minlength=m), out=indptr[1:])
            return cls(indptr, key - rows * n, v, (m, n))
        if len(key) > 1 and not bool(np.all(key[1:] >= key[:-1])):
            order = np.argsort(key)
            key, v = key[order], v[order]
        if len(key):
            first = np.ones(len(key), dtype=bool)
            first[1:] = key[1:] != key[:-1]
            if not first.all():
                starts = np.flatnonzero(first)
                v = np.add.reduceat(v, starts)
                key = key[starts]
            nz = v != 0
            key, v = key[nz], v[nz]
        rows = key // max(n, 1)
        cols = key - rows * max(n, 1)
        indptr = np.zeros(m + 1, dtype=np.int64)
        np.cumsum(np.bincount(rows, minlength=m), out=indptr[1:])
        return cls(indptr, cols, v, (m, n))

    @property
    def nnz(self) -> int:
        return len(self.data)

    def row_nnz(self) -> np.ndarray:
        return np.diff(self.indptr)

    def row_ids(self) -> np.ndarray:
        return np.repeat(np.arange(self.shape[0], dtype=np.int64), np.diff(self.indptr))

    def row_abs_bound(self) -> int:
        """An upper bound on every row's sum of absolute values."""
        if self._bound is None:
            if self.nnz == 0:
                self._bound = 0
            else:
                self._bound = int(max(abs(int(self.data.max())), abs(int(self.data.min())))) * \
                    int(self.row_nnz().max())
        return self._bound

    def rdot(self, y: np.ndarray) -> np.ndarray:
        """Exact Aᵀ y without forming the transpose (integer y).

        Float sums of integers are exact below 2**53: bincount is used when
        a bound on every partial sum proves that, int64 scatter-adds when
        int64 is safe, 20-bit limbs otherwise.
        """
        n = self.shape[1]
        if self.nnz == 0:
            return np.zeros(n, dtype=np.int64)
        ya = max_abs(y)
        da = max(abs(int(self.data.max())), abs(int(self.data.min())))
        colmax = int(np.bincount(self.indices, minlength=n).max())
        bound = ya * da * colmax
        if y.dtype != object and bound < 2 ** 52:
            w = (self.data * y[self.row_ids()]).astype(float)
            return np.rint(np.bincount(self.indices, weights=w, minlength=n)).astype(np.int64)
        if y.dtype != object and bound < SAFE:
            out = np.zeros(n, dtype=np.int64)
            np.add.at(out, self.indices, self.data * y[self.row_ids()])
            return out
        yo = y.astype(object)
        out = np.zeros(n, dtype=object)
        for part, sign in ((np.where(yo > 0, yo, 0), 1), (np.where(yo < 0, -yo, 0), -1)):
            shift = 0
            while any(part):
                limb = np.array([int(v) & ((1 << _LIMB) - 1) for v in part], dtype=np.int64)
                out = out + self.rdot(limb).astype(object) * (sign << shift)
                part = np.array([int(v) >> _LIMB for v in part], dtype=object)
                shift += _LIMB
        return as_int(out)

    def dot_int64(self, x: np.ndarray) -> np.ndarray:
        out = np.zeros(self.shape[0], dtype=np.int64)
        if self.nnz == 0:
            return out
        prod = self.data * x[self.indices]
        nzr = np.flatnonzero(np.diff(self.indptr))
        out[nzr] = np.add.reduceat(prod, self.indptr[nzr])
        return out

    @property
    def T(self) -> "IntCSR":
        return IntCSR.from_coo(self.indices, self.row_ids(), self.data, (self.shape[1], self.shape[0]))

    def take_rows(self, rows) -> "IntCSR":
        rows = np.asarray(rows, dtype=np.int64)
        counts = self.indptr[rows + 1] - self.indptr[rows]
        indptr = np.zeros(len(rows) + 1, dtype=np.int64)
        np.cumsum(counts, out=indptr[1:])
        pos = np.repeat(self.indptr[rows] - indptr[:-1], counts) + np.arange(int(indptr[-1]), dtype=np.int64)
        return IntCSR(indptr, self.indices[pos], self.data[pos], (len(rows), self.shape[1]))

    def take_cols(self, keep) -> "IntCSR":
        """The columns *keep* (sorted indices), renumbered 0.. in that order."""
        keep = np.asarray(keep, dtype=np.int64)
        new = np.full(self.shape[1], -1, dtype=np.int64)
        new[keep] = np.arange(len(keep))
        sel = new[self.indices] >= 0
        rid = self.row_ids()[sel]
        indptr = np.zeros(self.shape[0] + 1, dtype=np.int64)
        np.cumsum(np.bincount(rid, minlength=self.shape[0]), out=indptr[1:])
        return IntCSR(indptr, new[self.indices[sel]], self.data[sel], (self.shape[0], len(keep)))

    def sum_cols(self, cls, ncls: int, chunk: int = 1 << 20) -> "IntCSR":
        """A @ M with M[j, cls[j]] = 1: columns summed by class (rows in chunks of about *chunk* entries)."""
        cls = np.asarray(cls)
        m = self.shape[0]
        if self.nnz <= chunk or m <= 1:
            return IntCSR.from_coo(self.row_ids(), cls[self.indices], self.data, (m, ncls))
        pieces, r0 = [], 0
        while r0 < m:
            r1 = min(m, max(r0 + 1, int(np.searchsorted(self.indptr, self.indptr[r0] + chunk, side="right")) - 1))
            a, b = int(self.indptr[r0]), int(self.indptr[r1])
            part = IntCSR(self.indptr[r0:r1 + 1] - a, self.indices[a:b], self.data[a:b], (r1 - r0, self.shape[1]))
            pieces.append(IntCSR.from_coo(part.row_ids(), cls[part.indices], part.data, (r1 - r0, ncls)))
            r0 = r1
        return IntCSR.vstack(pieces, ncls)

    @staticmethod
    def vstack(pieces, n: int) -> "IntCSR":
        indptr = [np.zeros(1, dtype=np.int64)]
        off = 0
        for p in pieces:
            indptr.append(p.indptr[1:] + off)
            off += p.nnz
        return IntCSR(np.concatenate(indptr), np.concatenate([p.indices for p in pieces]),
                      np.concatenate([p.data for p in pieces]), (sum(p.shape[0] for p in pieces), n))

    def sum_rows(self, cls, ncls: int) -> "IntCSR":
        """M @ A with M[cls[i], i] = 1: rows summed by class.

        Rows are first put in class order by a stable sort, so that when each
        class's members already list their entries in order (the observation
        map: members at different settings tuples) nothing else is sorted.
        """
        rc = np.asarray(cls)[self.row_ids()]
        # stable sort; numpy sorts 16-bit keys by radix (8x faster than a stable sort of int64 here)
        order = np.argsort(rc.astype(np.uint16) if ncls <= 1 << 16 else rc, kind="stable")
        rc = rc[order]
        return IntCSR.from_coo(rc, self.indices[order], self.data[order], (ncls, self.shape[1]))

    def toarray(self) -> np.ndarray:
        out = np.zeros(self.shape, dtype=np.int64)
        out[self.row_ids(), self.indices] = self.data
        return out

    def to_scipy(self):
        import scipy.sparse as sp

        return sp.csr_matrix((self.data, self.indices, self.indptr), shape=self.shape)


def sub(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Exact a - b."""
    if a.dtype != object and b.dtype != object and max_abs(a) + max_abs(b) < SAFE:
        return a - b
    return as_int(a.astype(object) - b.astype(object))


def reduced_costs(arrays, AT, cost: ExactVector, y: ExactVector) -> tuple[np.ndarray, int]:
    """(R, G) with Aᵀy − c = R / G exactly, column by column.

    ``arrays`` is a :class:`nogo.model.ModelArrays`, ``AT`` its matrix
    transposed (CSR).  Row i of the system is A[i] / row_den[i].
    """
    nz = y.nonzero()
    L = lcm_all(set(arrays.row_den[nz].tolist())) if len(nz) else 1
    if L == 1:
        Z = y.num
    else:
        Z = as_int(y.num.astype(object) * (L // arrays.row_den).astype(object))
    AtZ = arrays.A.rdot(Z) if AT is None else matvec(AT, Z)  # over y.den * L
    d1 = y.den * L
    G = d1 * cost.den // math.gcd(d1, cost.den)
    return sub(mul(AtZ, G // d1), mul(cost.num, G // cost.den)), G
