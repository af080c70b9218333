"""Reductions: the step interface, views of a reduced model's names, exact row comparison."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

import numpy as np

from ..intarith import ExactVector
from ..lazyseq import LazySeq
from ..model import Column, LinearModel, ModelArrays


# -- views of the reduced model's names --------------------------------------------
@dataclass
class Subset(LazySeq):
    """The entries ``keep`` of a parent sequence (kept rows' sources, kept columns)."""

    parent: Sequence
    keep: np.ndarray

    def __len__(self) -> int:
        return len(self.keep)

    def _one(self, i: int):
        return self.parent[int(self.keep[i])]


@dataclass
class MergedColumns(LazySeq):
    """A reduced column: a class of columns of the parent forced equal."""

    parent: Sequence
    scenario: object
    first: np.ndarray  # a member per class
    size: np.ndarray  # members per class
    what: str = "column(s) forced equal to it"

    def __len__(self) -> int:
        return len(self.first)

    def _one(self, c: int) -> Column:
        base = self.parent[int(self.first[c])]
        n = int(self.size[c])
        if n == 1:
            return base
        return Column(base.settings, base.events, base.values,
                      f"{base.describe(self.scenario)} and {n - 1} {self.what}")


def _derived(model: LinearModel, arrays: ModelArrays, columns, sources, note: str) -> LinearModel:
    return LinearModel(model.scenario, model.label, model.assumptions, columns, None, None, sources, None,
                       list(model.notes), kind=model.kind, extra={}, arrays=arrays)


# -- helpers -----------------------------------------------------------------------
def _transpose(model: LinearModel):
    return model.transposed()


def reduced_cost_numerators(model: LinearModel, cost: ExactVector, y: ExactVector) -> tuple[np.ndarray, int]:
    """(R, G) with Aᵀy − c = R / G exactly, column by column."""
    from ..intarith import reduced_costs

    return reduced_costs(model.arrays, None, cost, y)


# -- steps -----------------------------------------------------------------------
@dataclass
class Step:
    """One reduction step: the model before and after, and the maps between them."""

    name: str
    summary: str
    before: LinearModel
    after: LinearModel

    def lift_point(self, x: ExactVector) -> ExactVector:
        raise NotImplementedError

    def lift_duals(self, y: ExactVector, cost: ExactVector) -> ExactVector:
        raise NotImplementedError

    def reduce_cost(self, cost: ExactVector) -> ExactVector:
        raise NotImplementedError


# -- hashing rows and checking them exactly -----------------------------------------
def _float_dot(B, w: np.ndarray) -> np.ndarray:
    """B @ w in floats, summed in index order (equal rows give bit-equal results; a hash only)."""
    out = np.zeros(B.shape[0])
    if B.nnz:
        prod = B.data * w[B.indices]
        nzr = np.flatnonzero(B.row_nnz())
        out[nzr] = np.add.reduceat(prod, B.indptr[nzr])
    return out


def hash_weights(n: int, seed: int) -> np.ndarray:
    """n weights in [0, 1) from the splitmix64 mix of (index, seed): a hash only (equality is checked exactly).

    (A Weyl sequence frac(i·φ) is additive, so sums over structured index
    sets collide; the mix is not.)  S. Vigna's splitmix64 finaliser.
    """
    with np.errstate(over="ignore"):
        x = (np.arange(n, dtype=np.uint64) + np.uint64(seed) * np.uint64(0x632BE59BD9B4E019)) * \
            np.uint64(0x9E3779B97F4A7C15)
        x ^= x >> np.uint64(30)
        x *= np.uint64(0xBF58476D1CE4E5B9)
        x ^= x >> np.uint64(27)
        x *= np.uint64(0x94D049BB133111EB)
        x ^= x >> np.uint64(31)
    return (x >> np.uint64(11)).astype(float) / float(1 << 53)


def _rows_equal(B, i: np.ndarray, j: np.ndarray) -> np.ndarray:
    """Row i[k] of B equals row j[k] (same columns, same entries), for every k at once."""
    ni = B.indptr[i + 1] - B.indptr[i]
    ok = ni == B.indptr[j + 1] - B.indptr[j]
    k = np.where(ok, ni, 0)
    tot = int(k.sum())
    if tot == 0:
        return ok
    pair = np.repeat(np.arange(len(i)), k)
    off = np.arange(tot) - np.repeat(np.cumsum(k) - k, k)
    pi, pj = B.indptr[i][pair] + off, B.indptr[j][pair] + off
    bad = (B.indices[pi] != B.indices[pj]) | (B.data[pi] != B.data[pj])
    return ok & (np.bincount(pair[bad], minlength=len(i)) == 0)


def _row_equal(B, i: int, j: int) -> bool:
    a0, a1, b0, b1 = B.indptr[i], B.indptr[i + 1], B.indptr[j], B.indptr[j + 1]
    return (a1 - a0 == b1 - b0 and np.array_equal(B.indices[a0:a1], B.indices[b0:b1])
            and np.array_equal(B.data[a0:a1], B.data[b0:b1]))
