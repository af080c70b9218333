"""Projective measurements: one projector per outcome, in the scenario's outcome order.

Written forms (our own keys):

* ``X``, ``Y``, ``Z`` (qubits): the Pauli eigenbases, first outcome on the +1 eigenvector;
* ``{bloch: [theta, phi]}`` or ``{bloch: theta}`` (qubits): first outcome on
  cos(theta/2)|0> + e^{i phi} sin(theta/2)|1>, the second on the orthogonal vector
  (so the observable is n·sigma with n = (sin theta cos phi, sin theta sin phi, cos theta));
* ``{basis: [v1, v2, ...]}``: orthonormal vectors, one per outcome;
* ``{projectors: [P1, P2, ...]}``: orthogonal projectors summing to the identity.

Checks: normalised, orthogonal, complete (to 1e-9 numerically, then exactly
with sympy when the numbers are exact; a measurement that is projective only
numerically is used for floating-point answers and flagged, so no certified
verdict rests on it).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import sympy

from ..errors import InputError, Where
from ..yamlread import YList, YMap
from .numbers import exact_from_float, parse_number

TOL = 1e-9


@dataclass
class Measurement:
    projectors: tuple[np.ndarray, ...]  # numeric, one per outcome
    exact: tuple[sympy.Matrix, ...] | None = None  # exact projectors when exactly projective
    label: str = ""

    @property
    def dim(self) -> int:
        return self.projectors[0].shape[0]

    @property
    def outcomes(self) -> int:
        return len(self.projectors)


def _num(m: sympy.Matrix) -> np.ndarray:
    return np.array(m.evalf(30).tolist(), dtype=complex)


def bloch(theta, phi=0, label: str | None = None) -> Measurement:
    """Qubit measurement along the Bloch direction (theta, phi); exact when the angles are."""
    theta, phi = sympy.sympify(theta), sympy.sympify(phi)
    n = sympy.Matrix([sympy.cos(theta / 2), sympy.exp(sympy.I * phi) * sympy.sin(theta / 2)])
    m = sympy.Matrix([-sympy.exp(-sympy.I * phi) * sympy.sin(theta / 2), sympy.cos(theta / 2)])
    # the orthogonal vector is written out rather than taken as I - P so both stay rank one exactly
    P0, P1 = n * n.H, m * m.H
    t, f = float(theta), float(phi)
    nv = np.array([np.cos(t / 2), np.exp(1j * f) * np.sin(t / 2)])
    mv = np.array([-np.exp(-1j * f) * np.sin(t / 2), np.cos(t / 2)])
    return Measurement((np.outer(nv, nv.conj()), np.outer(mv, mv.conj())), (P0, P1),
                       label or f"bloch({theta}, {phi})")


def bloch_float(theta: float, phi: float = 0.0) -> Measurement:
    """From optimiser floats, taken as the exact binary rationals they are."""
    return bloch(exact_from_float(theta), exact_from_float(phi), f"bloch({float(theta)!r}, {float(phi)!r})")


PAULI = {
    "Z": (0, 0),
    "X": (sympy.pi / 2, 0),
    "Y": (sympy.pi / 2, sympy.pi / 2),
}


def from_unitary(U: np.ndarray, groups: list[list[int]]) -> Measurement:
    """Numeric measurement whose outcome k projects on the columns groups[k] of U."""
    Ps = []
    for g in groups:
        V = U[:, g]
        Ps.append(V @ V.conj().T)
    return Measurement(tuple(Ps), None, "numeric")


def check_projective(Ps: list[np.ndarray], where: Where | None, what: str) -> None:
    d = Ps[0].shape[0]
    total = np.zeros((d, d), dtype=complex)
    for k, P in enumerate(Ps):
        if P.shape != (d, d):
            raise InputError(f"{what}: outcome {k + 1} acts on dimension {P.shape[0]}, not {d}", where)
        if np.max(np.abs(P - P.conj().T)) > TOL:
            raise InputError(f"{what}: the projector of outcome {k + 1} is not Hermitian", where)
        if np.max(np.abs(P @ P - P)) > TOL:
            raise InputError(f"{what}: the operator of outcome {k + 1} is not a projector (P^2 != P)", where,
                             "give orthonormal basis vectors or genuine projectors")
        total += P
    if np.max(np.abs(total - np.eye(d))) > TOL:
        raise InputError(f"{what}: the projectors do not add up to the identity (the measurement is not complete)",
                         where, "every outcome's projector must be listed, in the scenario's outcome order")


def _exactly_projective(Ps: list[sympy.Matrix]) -> bool:
    d = Ps[0].rows
    try:
        if sympy.simplify(sum(Ps, sympy.zeros(d, d)) - sympy.eye(d)) != sympy.zeros(d, d):
            return False
        return all(sympy.simplify(P * P - P) == sympy.zeros(d, d) and sympy.simplify(P - P.H) == sympy.zeros(d, d)
                   for P in Ps)
    except Exception:  # noqa: BLE001 - undecidable simplification: treat as not exact
        return False


def _w(raw, key, path, where):
    return raw.where(key, path) if isinstance(raw, (YMap, YList)) else where


def measurement_from_yaml(raw, n_outcomes: int, where: Where, what: str) -> Measurement:
    """Read one measurement with ``n_outcomes`` outcomes (the scenario's count)."""
    path = where.key or what
    if isinstance(raw, str) and raw.strip() in PAULI:
        if n_outcomes != 2:
            raise InputError(f"{what}: '{raw}' is a two-outcome qubit measurement, the scenario has {n_outcomes} outcomes",
                             where)
        th, ph = PAULI[raw.strip()]
        m = bloch(th, ph, raw.strip())
        return m
    if not isinstance(raw, dict) or len(raw) != 1:
        raise InputError(f"{what}: a measurement is X, Y, Z or one of {{bloch: [theta, phi]}}, {{basis: [...]}}, "
                         f"{{projectors: [...]}}", where)
    (kind, arg), = raw.items()
    kw = _w(raw, kind, f"{path}.{kind}", where)
    if kind == "bloch":
        if n_outcomes != 2:
            raise InputError(f"{what}: a Bloch-angle measurement has two outcomes, the scenario {n_outcomes}", kw)
        if isinstance(arg, list):
            if len(arg) not in (1, 2):
                raise InputError(f"{what}: bloch takes [theta] or [theta, phi]", kw)
            th = parse_number(arg[0], kw)
            ph = parse_number(arg[1], kw) if len(arg) == 2 else sympy.Integer(0)
        elif isinstance(arg, dict):
            extra = set(arg) - {"theta", "phi"}
            if extra or "theta" not in arg:
                raise InputError(f"{what}: bloch takes {{theta: .., phi: ..}}", kw)
            th, ph = parse_number(arg["theta"], kw), parse_number(arg.get("phi", 0), kw)
        else:
            th, ph = parse_number(arg, kw), sympy.Integer(0)
        if not (th.is_real and ph.is_real):
            raise InputError(f"{what}: Bloch angles are real numbers", kw)
        return bloch(th, ph)
    if kind == "basis":
        if not isinstance(arg, list) or not all(isinstance(v, list) for v in arg):
            raise InputError(f"{what}: 'basis' is a list of vectors, one per outcome", kw)
        if len(arg) != n_outcomes:
            raise InputError(f"{what}: 'basis' has {len(arg)} vectors but the scenario has {n_outcomes} outcomes",
                             kw, "use 'projectors' when an outcome has more than one basis vector")
        vecs = [sympy.Matrix([parse_number(x, kw) for x in v]) for v in arg]
        d = vecs[0].rows
        if any(v.rows != d for v in vecs) or d != n_outcomes:
            raise InputError(f"{what}: a basis of dimension {n_outcomes} needs {n_outcomes} vectors of length "
                             f"{n_outcomes}", kw)
        num = [_num(v).reshape(-1) for v in vecs]
        for i, v in enumerate(num):
            if abs(np.linalg.norm(v) - 1) > TOL:
                raise InputError(f"{what}: basis vector {i + 1} has norm {np.linalg.norm(v):.6g}, not 1", kw)
        Ps = [np.outer(v, v.conj()) for v in num]
        check_projective(Ps, kw, what)
        ex = [v * v.H for v in vecs]
        return Measurement(tuple(Ps), tuple(ex) if _exactly_projective(ex) else None, "basis")
    if kind == "projectors":
        if not isinstance(arg, list) or len(arg) != n_outcomes:
            raise InputError(f"{what}: 'projectors' lists {n_outcomes} matrices (one per outcome)", kw)
        from .states import _matrix

        ex = [_matrix(P, kw) for P in arg]
        Ps = [_num(P) for P in ex]
        check_projective(Ps, kw, what)
        return Measurement(tuple(Ps), tuple(ex) if _exactly_projective(ex) else None, "projectors")
    from ..errors import suggest

    raise InputError(f"{what}: unknown measurement kind '{kind}'", kw, suggest(str(kind), ["bloch", "basis", "projectors"]))
