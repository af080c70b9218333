"""Noise robustness: the critical visibility of a quantum behaviour against a bundle.

For a state rho, a noise sigma (white noise by default) and the same
measurements, the behaviours p(v) = v p_rho + (1 - v) p_sigma form a segment.
The critical visibility is the largest v with p(v) in the bundle's set:

    maximise v  subject to  rows·q = rhs,  q >= 0,  O q - v (p_rho - p_sigma) = p_sigma,

an LP over the bundle's compiled model (O = the model's observation map).
Its dual multipliers z of the rows "O q = p(v)" are the coefficients of a
separating inequality z·p <= beta that holds on the whole set and is tight at
p(v*) (LP duality; the construction is the one used for visibility
thresholds throughout Bell nonlocality, e.g. D. Kaszlikowski et al., PRL 85,
4418 (2000)).  The float dual only *proposes* the inequality: it is rounded
to small integers, its exact maximum over the bundle is computed with a
Farkas certificate (:func:`nogo.check.decide`), and its value on the quantum
behaviour is enclosed in a ball; only then is "outside" claimed, with a
certified upper bound on the critical visibility.

Every sweep point is a pure function of picklable inputs and goes through
:func:`nogo.fanout.fan_out`.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction

import flint
import numpy as np
import scipy.sparse as sp
from scipy.optimize import linprog

from ..check import CheckResult, decide
from ..fanout import fan_out
from ..inequality import Inequality, format_inequality
from ..model import LinearModel
from .born import PREC, ball_behaviour, behaviour, behaviour_vector
from .certify import ball_dot, collins_gisin_text
from .experiment import Experiment
from .numbers import arb_from_fraction
from .states import State, white


def _observe_matrix(model: LinearModel) -> sp.csr_matrix:
    n_coord = len(model.scenario.coordinates())
    r, c, v = [], [], []
    for j, obs in enumerate(model.observe):
        for i, w in obs.items():
            r.append(i)
            c.append(j)
            v.append(float(w))
    return sp.csr_matrix((v, (r, c)), shape=(n_coord, len(model.columns)))


def _rows_matrix(model: LinearModel) -> sp.csr_matrix:
    r, c, v = [], [], []
    for i, row in enumerate(model.rows):
        for j, w in row.items():
            r.append(i)
            c.append(j)
            v.append(float(w))
    return sp.csr_matrix((v, (r, c)), shape=(len(model.rows), len(model.columns)))


@dataclass
class VisibilityLP:
    status: str  # "optimal" | "noise outside" | "unbounded" | solver text
    visibility: float | None  # v*, may exceed 1 (then the state's behaviour is inside)
    separator: np.ndarray | None  # dual coefficients z over coordinates (float, unscaled)


def visibility_lp(model: LinearModel, p_state: np.ndarray, p_noise: np.ndarray) -> VisibilityLP:
    """Float LP for the largest v with v p_state + (1-v) p_noise in the model's set.

    Parameters: the compiled bundle and two behaviours over ``scenario.coordinates()``.
    Returns the optimum and the dual coefficients of the behaviour rows.
    Pure function of picklable inputs.
    """
    A = _rows_matrix(model)
    O = _observe_matrix(model)
    n = A.shape[1]
    d = p_state - p_noise
    top = sp.hstack([A, sp.csr_matrix((A.shape[0], 1))])
    bottom = sp.hstack([O, sp.csr_matrix(-d.reshape(-1, 1))])
    A_eq = sp.vstack([top, bottom]).tocsc()
    b_eq = np.concatenate([[float(x) for x in model.rhs], p_noise])
    c = np.zeros(n + 1)
    c[-1] = -1.0
    res = linprog(c, A_eq=A_eq, b_eq=b_eq, bounds=[(0, None)] * (n + 1), method="highs")
    if res.status == 2:
        return VisibilityLP("noise outside", None, None)
    if res.status == 3:
        return VisibilityLP("unbounded", None, None)
    if res.status != 0:
        return VisibilityLP(res.message, None, None)
    y = np.asarray(res.eqlin.marginals)
    return VisibilityLP("optimal", float(res.x[-1]), y[A.shape[0]:])


@dataclass
class Separation:
    """An inequality valid for the bundle (exact Farkas certificate) that the quantum behaviour violates."""

    inequality: Inequality  # full coordinates, bound = its exact maximum over the bundle
    check: CheckResult  # the exact decision (implied, with certificate)
    value: flint.arb  # rigorous enclosure of its value on the state's behaviour (full form)
    text: str  # in the trade's notation (Collins–Gisin when the bundle is no-signalling)
    visibility_bound: flint.arb | None  # certified: v_c <= this (when the noise behaviour is exact)
    shown: Inequality | None = None  # ``text`` parsed back: the form every printed number refers to
    shown_value: flint.arb | None = None  # its value on the state's behaviour
    form: str = "full"  # "Collins–Gisin" or "full"

    @property
    def margin(self) -> float:
        return float((self.value - arb_from_fraction(self.inequality.bound)).lower())


def _round_direction(z: np.ndarray, den: int) -> list[Fraction] | None:
    m = float(np.max(np.abs(z)))
    if m == 0:
        return None
    return [Fraction(float(x) / m).limit_denominator(den) for x in z]


def separate(model: LinearModel, z: np.ndarray, p_state_balls: dict, p_noise_balls: dict | None,
             name: str = "separating") -> Separation | None:
    """Turn float dual coefficients into a certified separating inequality, or None."""
    sc = model.scenario
    coords = sc.coordinates()
    for den in (1, 2, 4, 6, 12, 24, 60, 120, 1000, 10 ** 4, 10 ** 6):
        for sign in (1, -1):
            c = _round_direction(sign * z, den)
            if c is None:
                return None
            coeffs = {k: v for k, v in zip(coords, c) if v}
            probe = decide(model, Inequality(sc, coeffs, Fraction(0)), guard=False)
            beta = probe.maximum
            ineq = Inequality(sc, coeffs, beta, name)
            value = ball_dot(coeffs, p_state_balls)
            old = flint.ctx.prec
            flint.ctx.prec = PREC
            try:
                if not (value - arb_from_fraction(beta) > 0):
                    continue
                # canonical integer form keeps the printed inequality short
                ints, b = ineq.canonical()
                coeffs = {k: Fraction(v) for k, v in zip(coords, ints) if v}
                ineq = Inequality(sc, coeffs, Fraction(b), name)
                check = decide(model, ineq, guard=False)
                if not check.implied:  # cannot happen: same functional up to normalisation and scale
                    continue
                value = ball_dot(coeffs, p_state_balls)
                vb = None
                if p_noise_balls is not None:
                    noise_val = ball_dot(coeffs, p_noise_balls)
                    vb = (arb_from_fraction(ineq.bound) - noise_val) / (value - noise_val)
            finally:
                flint.ctx.prec = old
            text, shown, form = notation(model, ineq)
            shown_value = ball_dot(shown.coeffs, p_state_balls)
            return Separation(ineq, check, value, text, vb, shown, shown_value, form)
    return None


def notation(model: LinearModel, ineq: Inequality) -> tuple[str, Inequality, str]:
    """Collins–Gisin text when the bundle makes every marginal setting-independent, else full coordinates.

    Returns the text, the text parsed back (every number printed refers to it) and the form's name."""
    from ..check import marginal_guard
    from ..errors import InputError
    from ..inequality import parse_inequality

    text = collins_gisin_text(model.scenario, ineq.coeffs, ineq.bound)
    try:
        cg = parse_inequality(model.scenario, text, ineq.name)
        if cg.marginals:
            marginal_guard(model, cg)
        return text, cg, "Collins–Gisin"
    except InputError:
        text = format_inequality(model.scenario, ineq.coeffs, ineq.bound)
        return text, parse_inequality(model.scenario, text, ineq.name), "full"


@dataclass
class Robustness:
    bundle: str
    noise: str
    visibility: float | None  # float LP optimum (v* >= 1: inside)
    status: str
    inside: bool | None
    separation: Separation | None = None
    inside_evidence: str = ""
    notes: list[str] = field(default_factory=list)


def noise_state(exp: Experiment, noise: State | str | None) -> State:
    if noise is None or noise == "white":
        return white(exp.state.dims)
    if isinstance(noise, State):
        return noise
    raise ValueError(f"unknown noise {noise!r}")


def _certify_inside_rational(model: LinearModel, exp: Experiment) -> str | None:
    """Exact membership when the behaviour is rational: a checked rational point of the model."""
    from ..exact import ExactFailure, exact_optimum, point_violation
    from .born import exact_behaviour

    try:
        eb = exact_behaviour(exp)
    except ValueError:
        return None
    vals = []
    for k in model.scenario.coordinates():
        v = eb[k]
        if not v.is_Rational:
            return None
        vals.append(Fraction(int(v.p), int(v.q)))
    rows = list(model.rows)
    rhs = list(model.rhs)
    for i, p in enumerate(vals):
        rows.append({j: obs[i] for j, obs in enumerate(model.observe) if i in obs})
        rhs.append(p)
    fixed = LinearModel(model.scenario, model.label, model.assumptions, model.columns, rows, rhs,
                        list(model.sources) + [model.sources[0]] * len(vals), model.observe)
    try:
        opt = exact_optimum(fixed, [Fraction(0)] * len(model.columns))
    except ExactFailure:
        return None
    if point_violation(fixed, opt.point) is None:
        return "the behaviour is rational and a rational point of the model reproduces it exactly (checked)"
    return None


def robustness(model: LinearModel, exp: Experiment, noise: State | str | None = None) -> Robustness:
    """Critical visibility against the bundle, with certified evidence where possible."""
    nstate = noise_state(exp, noise)
    nexp = exp.with_state(nstate)
    p_s = np.array(list(behaviour(exp).values()))
    p_n = np.array(list(behaviour(nexp).values()))
    lp = visibility_lp(model, p_s, p_n)
    r = Robustness(model.label, nstate.label, lp.visibility, lp.status, None)
    if lp.status != "optimal":
        if lp.status == "noise outside":
            r.notes.append("the noise's own behaviour lies outside the set; no visibility is defined")
        return r
    if lp.visibility >= 1 - 1e-9:
        r.inside = True
        ev = _certify_inside_rational(model, exp) if exp.is_exact else None
        r.inside_evidence = ev or (f"float LP only: the segment stays inside up to v = {lp.visibility:.6g}; "
                                   "an irrational behaviour has no exact rational witness")
        return r
    r.inside = False
    if not exp.is_exact:
        r.notes.append("inputs not exact: outside by float LP only")
        return r
    pb = ball_behaviour(exp)
    nb = ball_behaviour(nexp) if nexp.is_exact else None
    sep = separate(model, lp.separator, pb, nb)
    if sep is None:
        r.inside = None
        r.notes.append("float LP says outside, but no certified separating inequality was found")
    r.separation = sep
    return r


# -- sweeps and plots -------------------------------------------------------------
def _member(model: LinearModel, p) -> bool:
    """Is the behaviour p inside the model's set? (float LP; a sweep point; *model* is shared)"""
    lp = visibility_lp(model, p, p)  # d = 0: feasibility of p itself
    return lp.status in ("optimal", "unbounded")


def sweep(model: LinearModel, exp: Experiment, inequalities: list[Inequality], noise=None, steps: int = 41,
          workers: int | None = None) -> dict:
    """Values of the inequalities (left sides as written) and float membership along v in [0, 1]."""
    nstate = noise_state(exp, noise)
    p_s = behaviour_vector(exp)
    p_n = behaviour_vector(exp, nstate.rho)
    vs = np.linspace(0, 1, steps)
    pts = [v * p_s + (1 - v) * p_n for v in vs]
    inside = fan_out(_member, pts, workers, shared=model)  # the model travels to each worker once
    vecs = [np.array([float(x) for x in q.vector()]) for q in inequalities]
    label = {id(q): (f"{q.name}: " if q.name else "") + q.display() for q in inequalities}
    return {"v": vs.tolist(), "inside": inside,
            "values": {label[id(q)]: [q.written_value(float(vec @ p)) for p in pts]
                       for q, vec in zip(inequalities, vecs)},
            "bounds": {label[id(q)]: float(q.written_bound) for q in inequalities},
            "senses": {label[id(q)]: q.sense for q in inequalities}}


def plot_sweep(data: dict, path: str, title: str = "", critical: float | None = None) -> None:
    """Inequality values against visibility; hatched where the behaviour is outside the set.

    Every line has its own dash pattern and marker, so the legend reads without colour; the
    y-axis is the left side of each inequality as written (its text is in the legend)."""
    import textwrap

    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from ..atomic import save_figure

    styles = [("-", "o"), ("--", "s"), ("-.", "^"), (":", "D"), ((0, (5, 1, 1, 1)), "v")]
    fig, ax = plt.subplots(figsize=(7.2, 5.0))
    v = data["v"]
    every = max(1, len(v) // 10)
    for k, (name, vals) in enumerate(data["values"].items()):
        ls, mk = styles[k % len(styles)]
        text = "\n".join(textwrap.wrap(name, 60, break_on_hyphens=False))
        line, = ax.plot(v, vals, ls=ls, marker=mk, markevery=every, ms=4, label=text)
        sense = data.get("senses", {}).get(name, "<=")
        ax.axhline(data["bounds"][name], color=line.get_color(), ls=(0, (1, 2)), lw=1,
                   label=f"its bound ({sense} {data['bounds'][name]:g})")
    outside = [x for x, ins in zip(v, data["inside"]) if not ins]
    if outside:
        start = critical if critical is not None and critical < 1 else min(outside)
        ax.axvspan(start, max(outside), facecolor="0.92", edgecolor="0.6", hatch="//", lw=0, zorder=0,
                   label="outside the set (float LP)")
    if critical is not None and critical < 1:
        ax.axvline(critical, color="k", ls="--", lw=1, label=f"critical visibility {critical:.4f}")
    ax.set_xlabel("visibility v (weight of the state; 1 - v of noise)")
    ax.set_ylabel("left side of the inequality, as written")
    if title:
        ax.set_title("\n".join(textwrap.wrap(title, 70, break_on_hyphens=False)), fontsize=10)
    ax.legend(fontsize=7, loc="best")
    fig.tight_layout()
    save_figure(fig, path)
    plt.close(fig)
