"""Quantum states of the parties' systems: vectors, density matrices, families, mixtures.

A :class:`State` keeps a numeric density matrix (numpy, for speed) and, when
every number was given exactly, the exact one (sympy) that certification
evaluates in ball arithmetic.  Subsystems are in the scenario's party order;
``dims[i]`` is party i's local dimension.

Families (our own key names, the trade's states):

* ``max_entangled`` (two parties): sum_i |ii>/sqrt(d);
* ``singlet``: (|01> - |10>)/sqrt(2);
* ``ghz``: (|0...0> + |1...1>)/sqrt(2) on all parties (local dimension d: sum_i |i...i>/sqrt(d));
* ``w``: equal superposition of one excitation over n qubits;
* ``product``: one vector per party; ``vector``: amplitudes; ``density``: a matrix;
* ``white``: the maximally mixed state;
* ``mix``: [{weight, state}, ...]; any state may also carry ``visibility: v`` and
  ``noise: STATE`` (white by default) to mean v*state + (1 - v)*noise.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import reduce

import numpy as np
import sympy

from ..errors import InputError, Where
from ..yamlread import YList, YMap
from .numbers import parse_number

TOL = 1e-9  # how far from normalised/positive a written state may be (decimals)


@dataclass
class State:
    dims: tuple[int, ...]
    rho: np.ndarray  # numeric density matrix
    exact: sympy.Matrix | None = None  # exact density matrix, or None
    label: str = ""
    vector: np.ndarray | None = field(default=None, repr=False)  # when pure
    exact_vector: sympy.Matrix | None = field(default=None, repr=False)

    @property
    def dim(self) -> int:
        return int(np.prod(self.dims))

    @property
    def is_exact(self) -> bool:
        return self.exact is not None


# -- constructors --------------------------------------------------------------
def _basis(dims, digits) -> sympy.Matrix:
    D = reduce(lambda a, b: a * b, dims, 1)
    idx = 0
    for d, k in zip(dims, digits):
        idx = idx * d + k
    v = sympy.zeros(D, 1)
    v[idx] = 1
    return v


def pure(vector: sympy.Matrix, dims: tuple[int, ...], label: str) -> State:
    """A pure state from an exact vector, normalised exactly."""
    norm2 = sum((sympy.Abs(x) ** 2 for x in vector), sympy.Integer(0))
    num = np.array([complex(sympy.N(x, 30)) for x in vector])
    n = float(np.linalg.norm(num))
    if n < TOL:
        raise ValueError("the zero vector is not a state")
    norm2 = sympy.simplify(norm2)
    if norm2 != 1:
        vector = vector / sympy.sqrt(norm2)
    num = num / n
    return State(tuple(dims), np.outer(num, num.conj()), vector * vector.H, label, num, vector)


def from_numpy(rho_or_vector: np.ndarray, dims: tuple[int, ...], label: str = "numeric") -> State:
    """A state given only numerically (no exact form): random states, optimiser output."""
    a = np.asarray(rho_or_vector, dtype=complex)
    if a.ndim == 1:
        a = a / np.linalg.norm(a)
        return State(tuple(dims), np.outer(a, a.conj()), None, label, a, None)
    _check_density(a, None, label)
    return State(tuple(dims), a / np.trace(a).real, None, label)


def exact_from_vector(vector: np.ndarray, dims: tuple[int, ...], label: str = "numeric") -> State:
    """A pure state whose exact form is the binary-rational amplitudes given, normalised."""
    from .numbers import exact_from_float

    v = sympy.Matrix([exact_from_float(z.real) + sympy.I * exact_from_float(z.imag) for z in np.asarray(vector)])
    return pure(v, dims, label)


def white(dims: tuple[int, ...]) -> State:
    D = int(np.prod(dims))
    return State(tuple(dims), np.eye(D) / D, sympy.eye(D) / D, "white noise")


def max_entangled(d: int, n: int) -> State:
    if n != 2:
        raise ValueError("the maximally entangled state is for two parties; use ghz for more")
    v = sum((_basis((d, d), (i, i)) for i in range(d)), sympy.zeros(d * d, 1)) / sympy.sqrt(d)
    return pure(v, (d, d), f"maximally entangled (d={d})")


def singlet() -> State:
    v = (_basis((2, 2), (0, 1)) - _basis((2, 2), (1, 0))) / sympy.sqrt(2)
    return pure(v, (2, 2), "singlet")


def ghz(n: int, d: int = 2) -> State:
    dims = (d,) * n
    v = sum((_basis(dims, (i,) * n) for i in range(d)), sympy.zeros(d ** n, 1)) / sympy.sqrt(d)
    return pure(v, dims, f"GHZ ({n} parties)")


def w_state(n: int) -> State:
    dims = (2,) * n
    v = sum((_basis(dims, tuple(1 if j == i else 0 for j in range(n))) for i in range(n)),
            sympy.zeros(2 ** n, 1)) / sympy.sqrt(n)
    return pure(v, dims, f"W ({n} parties)")


def mixture(parts: list[tuple[sympy.Expr | float, State]], label: str = "") -> State:
    """sum_i w_i rho_i with w_i >= 0 summing to one (checked by the caller)."""
    dims = parts[0][1].dims
    rho = sum(float(w) * s.rho for w, s in parts)
    exact = None
    if all(s.exact is not None for _, s in parts) and all(isinstance(w, sympy.Expr) for w, _ in parts):
        exact = sum((w * s.exact for w, s in parts), sympy.zeros(*parts[0][1].exact.shape))
    return State(dims, rho, exact, label or " + ".join(f"{w}*[{s.label}]" for w, s in parts))


def _check_density(rho: np.ndarray, where, label):
    if rho.shape[0] != rho.shape[1]:
        raise InputError(f"a density matrix must be square, got {rho.shape}", where)
    if np.max(np.abs(rho - rho.conj().T)) > TOL:
        raise InputError(f"the density matrix of '{label}' is not Hermitian", where)
    if abs(np.trace(rho).real - 1) > TOL:
        raise InputError(f"the density matrix of '{label}' has trace {np.trace(rho).real:.6g}, not 1", where)
    low = float(np.min(np.linalg.eigvalsh((rho + rho.conj().T) / 2)))
    if low < -TOL:
        raise InputError(f"the density matrix of '{label}' is not positive (an eigenvalue is {low:.3g})", where)


# -- reading from YAML -----------------------------------------------------------
_FAMILIES = ("max_entangled", "singlet", "ghz", "w", "product", "vector", "density", "white", "mix")
_MODIFIERS = ("visibility", "noise", "dims")


def _where(raw, key, path, fallback):
    if isinstance(raw, (YMap, YList)):
        return raw.where(key, path)
    return fallback


def _vector(raw, where) -> sympy.Matrix:
    if not isinstance(raw, list) or not raw:
        raise InputError("a state vector is a list of amplitudes", where, "for example [1, 0, 0, 1] (normalised for you)")
    return sympy.Matrix([parse_number(x, _where(raw, i, where.key, where)) for i, x in enumerate(raw)])


def _matrix(raw, where) -> sympy.Matrix:
    if not isinstance(raw, list) or not raw or not all(isinstance(r, list) for r in raw):
        raise InputError("a matrix is a list of rows", where, "for example [[1/2, 0], [0, 1/2]]")
    n = len(raw)
    rows = []
    for i, r in enumerate(raw):
        if len(r) != n:
            raise InputError(f"a square matrix is needed: row {i + 1} has {len(r)} entries, not {n}",
                             _where(raw, i, where.key, where))
        rows.append([parse_number(x, _where(r, j, where.key, where)) for j, x in enumerate(r)])
    return sympy.Matrix(rows)


def _numeric(m: sympy.Matrix) -> np.ndarray:
    return np.array([[complex(sympy.N(x, 30)) for x in m.row(i)] for i in range(m.rows)])


def _split_dims(total: int, n: int, dims, where) -> tuple[int, ...]:
    if dims is not None:
        if not isinstance(dims, list) or len(dims) != n or not all(isinstance(d, int) and d >= 2 for d in dims):
            raise InputError(f"'dims' lists one local dimension (>= 2) per party ({n} parties)", where)
        if math.prod(dims) != total:
            raise InputError(f"'dims' {list(dims)} multiply to {math.prod(dims)}, but the state has dimension {total}", where)
        return tuple(dims)
    d = round(total ** (1.0 / n))
    if d ** n != total or d < 2:
        raise InputError(f"cannot split dimension {total} over {n} parties evenly", where, "give 'dims: [d1, d2, ...]'")
    return (d,) * n


def _dimension_arg(arg, what: str, kw: Where) -> int:
    d = 2 if arg is None else arg
    if not isinstance(d, int) or d < 2:
        raise InputError(f"{what} takes the local dimension (>= 2), e.g. '{what}: 2'", kw)
    return d


def _mixed_state(arg, n_parties: int, path: str, kw: Where, dims_hint) -> State:
    """A 'mix' declaration: a list of {weight, state}, weights adding up to 1."""
    if not isinstance(arg, list) or not arg:
        raise InputError("'mix' is a list of {weight: w, state: S}", kw)
    parts = []
    for i, item in enumerate(arg):
        iw = _where(arg, i, f"{path}.mix[{i}]", kw)
        if not isinstance(item, dict) or set(item) != {"weight", "state"}:
            raise InputError("each part of a mixture is {weight: w, state: S}", iw)
        w = parse_number(item["weight"], iw)
        if not w.is_real or float(w) < 0:
            raise InputError(f"a mixture weight must be a non-negative real, got {w}", iw)
        parts.append((w, state_from_yaml(item["state"], n_parties, iw, dims_hint)))
    total = sum(w for w, _ in parts)
    if abs(float(total) - 1) > TOL:
        raise InputError(f"mixture weights add up to {total}, not 1", kw)
    if len({s.dims for _, s in parts}) != 1:
        raise InputError("the parts of a mixture have different dimensions", kw)
    return mixture([(w / total, s) for w, s in parts])


def _family_state(kind: str, arg, raw_map: dict, n_parties: int, path: str, kw: Where, dims_hint) -> State:
    """The state named by one family key (singlet, ghz, vector, density, mix, ...)."""
    dims_raw = raw_map.get("dims")
    if kind == "singlet":
        return singlet()
    if kind == "max_entangled":
        return max_entangled(_dimension_arg(arg, "max_entangled", kw), n_parties)
    if kind == "ghz":
        return ghz(n_parties, _dimension_arg(arg, "ghz", kw))
    if kind == "w":
        return w_state(n_parties)
    if kind == "white":
        return white(tuple(dims_raw) if dims_raw else (dims_hint or (2,) * n_parties))
    if kind == "product":
        if not isinstance(arg, list) or len(arg) != n_parties:
            raise InputError(f"'product' lists one vector per party ({n_parties})", kw)
        vecs = [_vector(v, _where(arg, i, f"{path}.product", kw)) for i, v in enumerate(arg)]
        v = reduce(lambda a, b: sympy.kronecker_product(a, b), vecs)
        return pure(v, tuple(x.rows for x in vecs), "product")
    if kind == "vector":
        v = _vector(arg, kw)
        return pure(v, _split_dims(v.rows, n_parties, dims_raw, kw), "vector")
    if kind == "density":
        m = _matrix(arg, kw)
        num = _numeric(m)
        _check_density(num, kw, "density")
        exact = m if sympy.nsimplify(m.trace()) == 1 else m / m.trace()
        return State(_split_dims(m.rows, n_parties, dims_raw, kw), num / np.trace(num).real, exact, "density matrix")
    return _mixed_state(arg, n_parties, path, kw, dims_hint)


def _with_noise(st: State, raw, raw_map: dict, n_parties: int, path: str, m_where: Where) -> State:
    """Apply 'visibility' (and 'noise', white by default) to a state."""
    if "visibility" in raw_map:
        vw = _where(raw, "visibility", f"{path}.visibility", m_where)
        v = parse_number(raw_map["visibility"], vw)
        if not v.is_real or not 0 <= float(v) <= 1:
            raise InputError(f"a visibility is a number in [0, 1], got {v}", vw)
        nw = _where(raw, "noise", f"{path}.noise", m_where)
        noise = state_from_yaml(raw_map.get("noise", "white"), n_parties, nw, st.dims)
        if noise.dims != st.dims:
            raise InputError(f"the noise has dimensions {noise.dims}, the state {st.dims}", nw)
        return mixture([(v, st), (1 - v, noise)], f"{v}*[{st.label}] + {1 - v}*[{noise.label}]")
    if "noise" in raw_map:
        raise InputError("'noise' needs a 'visibility' (the weight of the state)", _where(raw, "noise", path, m_where))
    return st


def state_from_yaml(raw, n_parties: int, where: Where, dims_hint: tuple[int, ...] | None = None) -> State:
    """Read a state declaration (string family name or mapping)."""
    path = where.key or "state"
    if isinstance(raw, str):
        raw_map = {raw: None}
    elif isinstance(raw, dict):
        raw_map = raw
    else:
        raise InputError("a state is a family name (singlet, ghz, w, white, max_entangled) or a mapping",
                         where, "for example 'state: singlet' or 'state: {vector: [1, 0, 0, 1]}'")
    keys = [k for k in raw_map if k in _FAMILIES]
    unknown = [k for k in raw_map if k not in _FAMILIES and k not in _MODIFIERS]
    if unknown:
        from ..errors import suggest

        raise InputError(f"unknown state key '{unknown[0]}'", _where(raw, unknown[0], f"{path}.{unknown[0]}", where),
                         suggest(str(unknown[0]), _FAMILIES + _MODIFIERS))
    if len(keys) != 1:
        raise InputError("a state names exactly one of: " + ", ".join(_FAMILIES), where)
    kind = keys[0]
    kw = _where(raw, kind, f"{path}.{kind}", where)
    try:
        st = _family_state(kind, raw_map[kind], raw_map, n_parties, path, kw, dims_hint)
    except ValueError as exc:
        raise InputError(str(exc), kw) from None
    if len(st.dims) != n_parties:
        raise InputError(f"the state has {len(st.dims)} subsystems, the scenario {n_parties} parties", kw)
    return _with_noise(st, raw, raw_map, n_parties, path, where)
