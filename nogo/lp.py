"""Floating-point LP through HiGHS: how answers are *found* (never shown).

``maximise(model, cost)`` solves max cost·q s.t. rows·q = rhs, q >= 0 and
returns the float optimum with HiGHS's final basis; :mod:`nogo.exact` turns
that basis into exact rational primal and dual answers.

HiGHS: Q. Huangfu and J. A. J. Hall, "Parallelizing the dual revised simplex
method", Math. Prog. Comp. 10, 119–142 (2018).
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING, Any

from .model import LinearModel

if TYPE_CHECKING:  # heavy imports stay inside the functions that solve
    import highspy
    import numpy as np


@dataclass
class FloatAnswer:
    status: str  # "optimal" | "infeasible" | "unbounded" | other HiGHS status text
    value: float | None
    x: Any  # np.ndarray | None
    row_dual: Any  # np.ndarray | None
    basic_cols: list[int] | None
    basic_rows: list[int] | None


def _matrix(model: LinearModel):
    """Row-wise float matrix (start, index, value) of the model, from its integer arrays."""
    import numpy as np

    a = model.arrays
    A = a.A
    val = A.data.astype(float)
    if np.any(a.row_den != 1):
        val = val / np.repeat(a.row_den.astype(float), np.diff(A.indptr))
    return A.indptr.astype(np.int32), A.indices.astype(np.int32), val


def _floats(v) -> Any:
    import numpy as np

    from .intarith import ExactVector

    if isinstance(v, ExactVector):
        num = v.num.astype(float) if v.num.dtype != object else np.array([float(Fraction(int(x), 1)) for x in v.num])
        return num / float(v.den) if v.den < 2 ** 53 else np.array([float(x) for x in v])
    return np.array([float(c) for c in v], dtype=float)


_quiet = False


def new_highs() -> "highspy.Highs":
    """A silent HiGHS instance.

    HiGHS prints a banner on stdout when the first instance is made, before
    any option can be set; that would corrupt ``--json`` output, so the
    first construction runs with file descriptor 1 pointed at /dev/null.
    """
    import highspy

    global _quiet
    if _quiet:
        h = highspy.Highs()
    else:
        import os
        import sys

        sys.stdout.flush()
        saved = os.dup(1)
        devnull = os.open(os.devnull, os.O_WRONLY)
        try:
            os.dup2(devnull, 1)
            h = highspy.Highs()
        finally:
            os.dup2(saved, 1)
            os.close(saved)
            os.close(devnull)
        _quiet = True
    h.setOptionValue("output_flag", False)
    h.setOptionValue("log_to_console", False)
    return h


def make_highs(model: LinearModel, cost, sense: str = "max") -> "highspy.Highs":
    """A HiGHS instance holding the model with the given objective (Fractions, floats or an ExactVector)."""
    import highspy
    import numpy as np

    h = new_highs()
    lp = highspy.HighsLp()
    m, n = model.shape
    lp.num_col_, lp.num_row_ = n, m
    lp.col_cost_ = cost if isinstance(cost, np.ndarray) and cost.dtype == float else _floats(cost)
    lp.col_lower_ = np.zeros(n)
    lp.col_upper_ = np.full(n, highspy.kHighsInf)
    a = model.arrays
    rhs = a.rhs_num.astype(float) / a.rhs_den.astype(float)
    lp.row_lower_, lp.row_upper_ = rhs, rhs.copy()
    cache = model.extra.get("_csr")
    if cache is None:
        cache = _matrix(model)
        model.extra["_csr"] = cache
    lp.a_matrix_.format_ = highspy.MatrixFormat.kRowwise
    lp.a_matrix_.start_, lp.a_matrix_.index_, lp.a_matrix_.value_ = cache
    lp.a_matrix_.num_col_, lp.a_matrix_.num_row_ = n, m
    lp.sense_ = highspy.ObjSense.kMaximize if sense == "max" else highspy.ObjSense.kMinimize
    h.passModel(lp)
    return h


def maximise(model: LinearModel, cost) -> FloatAnswer:
    import highspy
    import numpy as np

    h = make_highs(model, cost)
    h.run()
    status = h.getModelStatus()
    text = h.modelStatusToString(status).lower()
    if status == highspy.HighsModelStatus.kOptimal:
        sol = h.getSolution()
        basis = h.getBasis()
        bc = [j for j, st in enumerate(basis.col_status) if st == highspy.HighsBasisStatus.kBasic]
        br = [i for i, st in enumerate(basis.row_status) if st == highspy.HighsBasisStatus.kBasic]
        return FloatAnswer("optimal", h.getInfo().objective_function_value, np.array(sol.col_value),
                           np.array(sol.row_dual), bc if basis.valid else None, br if basis.valid else None)
    if status == highspy.HighsModelStatus.kInfeasible:
        return FloatAnswer("infeasible", None, None, None, None, None)
    if status == highspy.HighsModelStatus.kUnbounded:
        return FloatAnswer("unbounded", None, None, None, None, None)
    return FloatAnswer(text, None, None, None, None, None)
