"""Measurement settings (and optionally the state) that violate an inequality most.

A local search (scipy.optimize: L-BFGS-B, or SLSQP when some events must have
probability zero) from several random starts drawn from a seeded generator,
so that a run is reproducible.  Qubit two-outcome measurements are
parametrised by Bloch angles; others by a unitary exp(iH) whose columns are
shared out among the outcomes.  At a read-out setting the inner observer's
measurement is what is optimised (the party reports its record).

Zero constraints (Hardy-type arguments: L. Hardy, PRL 71, 1665 (1993)) are
imposed on *amplitudes* when the state is pure and the projectors rank one:
p = |<a b|psi>|^2 = 0 exactly when the amplitude vanishes, and the amplitude
has a non-zero gradient there, which the probability has not.

The best point is returned as an :class:`Experiment` whose angles and
amplitudes are the binary rationals the floats hold, so its violation can be
certified in ball arithmetic like any declared experiment.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.linalg import expm
from scipy.optimize import minimize

from ..errors import InputError
from ..fanout import fan_out
from ..inequality import Coord, Inequality
from .born import behaviour_array
from .experiment import Experiment
from .measurements import bloch_float, from_unitary
from .states import exact_from_vector


@dataclass(frozen=True)
class Slot:
    """One measurement to optimise: a party's own, or an inner observer's."""

    kind: str  # "party" | "inner" | "inner_at" (an observer at a setting of its own)
    name: str  # party name or observer name
    setting: str | None
    dim: int
    outcomes: int

    @property
    def qubit(self) -> bool:
        return self.dim == 2 and self.outcomes == 2

    @property
    def n_params(self) -> int:
        return 2 if self.qubit else self.dim * self.dim


@dataclass
class Problem:
    """Everything a start needs, as plain picklable data."""

    slots: list[Slot]
    uses: list[list[tuple[int, tuple[int, ...] | None]]]  # [lab][reading]: (slot, relabel or None)
    dims: tuple[int, ...]
    cost: np.ndarray  # over scenario.coordinates()
    rho: np.ndarray | None  # fixed state, or None when the state is optimised
    zeros: list[int]  # coordinate indices that must vanish
    outcome_counts: list[int]
    which: tuple[tuple[int, ...], ...]  # per settings tuple: the reading of each lab (Experiment.lab_rows)


def _unitary(params: np.ndarray, d: int) -> np.ndarray:
    H = np.zeros((d, d), dtype=complex)
    k = 0
    for i in range(d):
        H[i, i] = params[k]
        k += 1
    for i in range(d):
        for j in range(i + 1, d):
            H[i, j] = params[k] + 1j * params[k + 1]
            H[j, i] = np.conj(H[i, j])
            k += 2
    return expm(1j * H)


def _slot_vectors(slot: Slot, params: np.ndarray) -> list[np.ndarray]:
    """Basis vectors (columns) and their outcome, for rank-one bookkeeping."""
    if slot.qubit:
        t, f = params
        return [np.array([np.cos(t / 2), np.exp(1j * f) * np.sin(t / 2)]),
                np.array([-np.exp(-1j * f) * np.sin(t / 2), np.cos(t / 2)])]
    U = _unitary(params, slot.dim)
    return [U[:, i] for i in range(slot.dim)]


def _groups(slot: Slot) -> list[list[int]]:
    return [list(range(g, slot.dim, slot.outcomes)) for g in range(slot.outcomes)]


def _slot_projectors(slot: Slot, params: np.ndarray) -> list[np.ndarray]:
    vecs = _slot_vectors(slot, params)
    return [sum(np.outer(vecs[i], vecs[i].conj()) for i in g) for g in _groups(slot)]


def _split(prob: Problem, x: np.ndarray):
    out, k = [], 0
    for s in prob.slots:
        out.append(x[k:k + s.n_params])
        k += s.n_params
    return out, x[k:]


def _state_of(prob: Problem, rest: np.ndarray):
    if prob.rho is not None:
        return prob.rho, None
    D = int(np.prod(prob.dims))
    psi = rest[:D] + 1j * rest[D:]
    psi = psi / np.linalg.norm(psi)
    return np.outer(psi, psi.conj()), psi


def _povms(prob: Problem, slot_params) -> list[list[np.ndarray]]:
    projs = [_slot_projectors(s, p) for s, p in zip(prob.slots, slot_params)]
    out = []
    for i, row in enumerate(prob.uses):
        prow = []
        for slot, relabel in row:
            P = projs[slot]
            if relabel is None:
                prow.append(np.array(P))
            else:
                d = P[0].shape[0]
                E = [np.zeros((d, d), dtype=complex) for _ in range(prob.outcome_counts[i])]
                for k, a in enumerate(relabel):
                    E[a] = E[a] + P[k]
                prow.append(np.array(E))
        out.append(prow)
    return out


def _behaviour(prob: Problem, x: np.ndarray) -> np.ndarray:
    sp, rest = _split(prob, x)
    rho, _ = _state_of(prob, rest)
    return behaviour_array(rho, prob.dims, _povms(prob, sp), prob.which)


def _amplitudes(prob: Problem, x: np.ndarray) -> np.ndarray:
    """Real and imaginary parts of <e_1 ... e_n|psi> for each zero event (pure state, rank one)."""
    sp, rest = _split(prob, x)
    _, psi = _state_of(prob, rest)
    vecs = [_slot_vectors(s, p) for s, p in zip(prob.slots, sp)]
    out = []
    per_setting = int(np.prod(prob.outcome_counts))
    for z in prob.zeros:
        si, ai = divmod(z, per_setting)
        as_ = np.unravel_index(ai, prob.outcome_counts)
        v = np.ones(1, dtype=complex)
        for i, (r_i, a_i) in enumerate(zip(prob.which[si], as_)):
            slot, relabel = prob.uses[i][r_i]
            k = a_i if relabel is None else relabel.index(a_i)
            v = np.kron(v, vecs[slot][k])
        amp = np.vdot(v, psi)
        out += [amp.real, amp.imag]
    return np.array(out)


def _start(prob: Problem, x0: np.ndarray) -> tuple[float, np.ndarray, float]:
    """One local search from a random start (a pure function of picklable inputs; *prob* is shared)."""
    f = lambda x: -float(prob.cost @ _behaviour(prob, x))  # noqa: E731
    if not prob.zeros:
        res = minimize(f, x0, method="L-BFGS-B")
        return -float(res.fun), res.x, 0.0
    rank_one = prob.rho is None and all(s.dim == s.outcomes for s in prob.slots)
    if rank_one:
        cons = {"type": "eq", "fun": lambda x: _amplitudes(prob, x)}
        viol = lambda x: float(np.max(np.abs(_amplitudes(prob, x)))) ** 2  # noqa: E731
    else:
        cons = {"type": "eq", "fun": lambda x: _behaviour(prob, x)[prob.zeros]}
        viol = lambda x: float(np.max(np.abs(_behaviour(prob, x)[prob.zeros])))  # noqa: E731
    res = minimize(f, x0, method="SLSQP", constraints=[cons], options={"maxiter": 500, "ftol": 1e-12})
    return -float(res.fun), res.x, viol(res.x)


@dataclass
class Optimum:
    value: float  # best value of the inequality's left side found
    experiment: Experiment  # with the best settings (exact binary-rational angles)
    values: list[float]  # best value of each start (feasible starts only)
    zero_violation: float  # largest remaining probability of a zero event
    notes: list[str] = field(default_factory=list)


def optimise(exp: Experiment, ineq: Inequality, *, starts: int = 8, seed: int = 0, over_state: bool = False,
             zeros: list[Coord] = (), workers: int | None = None, tol: float = 1e-9) -> Optimum:
    """Largest value of ``ineq``'s left side over measurements (and the state).

    Parameters
    ----------
    exp : the experiment whose scenario, dimensions and (unless ``over_state``) state are kept.
    ineq : the inequality; its left side is maximised.
    starts, seed : number of random starts and the seed of their generator.
    over_state : also optimise a pure state of the same dimensions.
    zeros : coordinates (settings, outcomes) that must have probability zero.
    workers : processes for the starts (through :func:`nogo.fanout.fan_out`).
    tol : how close to zero a zero event must be for a start to count.

    Returns
    -------
    :class:`Optimum`; its experiment can be certified with :func:`nogo.quantum.certify.evaluate`.

    Example
    -------
    >>> opt = optimise(load_experiment("examples/experiments/larch-birch-chsh.yaml"), chsh, starts=4, seed=1)
    >>> round(opt.value, 6)
    2.828427

    References: scipy.optimize (L-BFGS-B, SLSQP); Hardy, PRL 71, 1665 (1993) for zero constraints.
    """
    sc = exp.scenario
    slots, uses = _slots(exp)
    for s in slots:
        if s.outcomes > s.dim:
            raise InputError(f"{s.name} has {s.outcomes} outcomes on dimension {s.dim}: some outcome would never occur")
    coords = sc.coordinates()
    pos = {c: k for k, c in enumerate(coords)}
    cost = np.array([float(v) for v in ineq.vector()])
    prob = Problem(slots, uses, exp.state.dims, cost, None if over_state else exp.state.rho,
                   [pos[z] for z in zeros], [len(p.outcomes) for p in sc.labs], exp.lab_rows()[1])
    n = sum(s.n_params for s in slots) + (2 * int(np.prod(exp.state.dims)) if over_state else 0)
    rng = np.random.default_rng(seed)
    starts_x = [rng.uniform(-np.pi, np.pi, size=n) for _ in range(starts)]
    results = fan_out(_start, starts_x, workers, shared=prob)  # the problem travels to each worker once
    ok = [(v, x, z) for v, x, z in results if z <= tol]
    notes = []
    if not ok:
        notes.append(f"no start met the zero constraints to {tol}; showing the least violating one")
        ok = [min(results, key=lambda r: r[2])]
    value, x, zv = max(ok, key=lambda r: r[0])
    return Optimum(value, _experiment(exp, prob, x, over_state), [r[0] for r in ok], zv, notes)


def _slots(exp: Experiment) -> tuple[list[Slot], list[list[tuple[int, tuple[int, ...] | None]]]]:
    """One slot per measurement the experiment makes (a party's, an observer's, an observer's at its own
    setting), and for each lab's reading the slot it uses with the read-out chain's relabelling."""
    sc = exp.scenario
    slots: list[Slot] = []
    index: dict[tuple, int] = {}
    uses = []
    for i, lab in enumerate(exp.plan.labs):
        lab_obs = [o for o in sc.inner if o.lab == lab.lab and o.name in exp.inner]
        if not sc.nested and len(lab_obs) > 1:
            raise InputError(f"lab {lab.lab} has {len(lab_obs)} inner observers; optimising supports one per lab")
        if any(r.before for r in lab.readings):
            raise InputError(f"lab {lab.lab} has observers that measure one after another without being undone; "
                             f"optimising supports read-out chains without such dephasing")
        row = []
        for r in lab.readings:
            kind = "party" if not r.chain else ("inner" if r.setting is None else "inner_at")
            key = (kind, r.measurer, r.setting)
            if key not in index:
                index[key] = len(slots)
                n_out = len(sc.party(r.measurer).outcomes) if kind == "party" else len(sc.observer(r.measurer).outcomes)
                slots.append(Slot(kind, r.measurer, r.setting, exp.state.dims[i], n_out))
            row.append((index[key], tuple(r.relabel) if r.chain else None))
        uses.append(row)
    return slots, uses


def _experiment(exp: Experiment, prob: Problem, x: np.ndarray, over_state: bool) -> Experiment:
    sp, rest = _split(prob, x)
    meas = dict(exp.measurements)
    inner = dict(exp.inner)
    inner_at = dict(exp.inner_at)
    for s, p in zip(prob.slots, sp):
        if s.qubit:
            m = bloch_float(float(p[0]), float(p[1]))
        else:
            m = from_unitary(_unitary(p, s.dim), _groups(s))
        if s.kind == "party":
            meas[(s.name, s.setting)] = m
        elif s.kind == "inner_at":
            inner_at[(s.name, s.setting)] = m
        else:
            inner[s.name] = m
    state = exp.state
    if over_state:
        _, psi = _state_of(prob, rest)
        state = exact_from_vector(psi, exp.state.dims, "optimised pure state")
    return Experiment(exp.scenario, state, meas, inner, (exp.title + " (optimised)").strip(), exp.theory_file, exp.file,
                      inner_at=inner_at)
