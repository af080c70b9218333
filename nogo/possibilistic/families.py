"""Scenario families for n parties and their exact quantum supports.

Theories are generated, not shipped: :func:`family_theory` writes the YAML
text of an n-party theory (two settings, two outcomes per party; inner
observers in any chosen labs, read out at a chosen setting) with the bundles

* ``Bell-local``: a counterfactual outcome for every (party, setting) and
  their setting independence (Bell locality by A. Fine, PRL 48, 291 (1982));
* ``local-friendliness``: absoluteness of the inner records + local agency in
  its published, joint form (K.-W. Bong et al., Nature Physics 16, 1199
  (2020), arXiv:1907.05607): the outcomes of all *other* labs and all inner
  records, jointly, are uncorrelated with one lab's setting;
* ``no-signalling``: the same agency clauses without absoluteness (by the
  rule of projection, no-signalling on the observed outcomes).

Supports of pure n-qubit states measured in Pauli bases are exact: with
amplitudes in the Gaussian integers Z[i] (GHZ, W and graph states, up to one
positive scale) and Pauli eigenvectors scaled by sqrt(2) (also in Z[i]), the
amplitude of every outcome is a Gaussian integer times a nonzero constant,
so "p = 0" is decided by integer arithmetic (numpy int64 tensor
contractions; the entries are bounded by 2^n times the largest amplitude, far
from overflow for n <= 16).  With inner observers, the effective description
is used: at the read-out setting the lab reports the record, so the observed
support is that of the lab measuring the observer's basis there (DESIGN.md §3,
quantum side).

Patterns with published sources:

* GHZ (|0…0> + |1…1>) with X at setting 1 and Y at setting 2: perfect
  correlations of the Mermin operators at every settings tuple with an even
  number of Y (Greenberger, Horne, Shimony, Zeilinger, Am. J. Phys. 58, 1131
  (1990); N. D. Mermin, PRL 65, 1838 (1990));
* :func:`hardy_ladder`: the n-party Hardy pattern (L. Hardy, PRL 71, 1665
  (1993) for n = 2) in the ladder form written in its docstring.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from ..theory import Theory, load_theory_text
from .support import SupportPattern

NAMES = "ABCDEFGHIJKLMNOP"
OUTCOMES = ("+1", "-1")
SETTINGS = ("1", "2")

# rows: outcome +1, -1; entries conj(eigenvector) scaled to Z[i], as (real, imag)
_BASES = {
    "X": (np.array([[1, 1], [1, -1]]), np.array([[0, 0], [0, 0]])),
    "Y": (np.array([[1, 0], [1, 0]]), np.array([[0, -1], [0, 1]])),
    "Z": (np.array([[1, 0], [0, 1]]), np.array([[0, 0], [0, 0]])),
}
BASES = tuple(_BASES)


def party_names(n: int) -> tuple[str, ...]:
    if not 2 <= n <= len(NAMES):
        raise InputError(f"{n} parties are not supported here", hint=f"give 2 to {len(NAMES)} parties")
    return tuple(NAMES[:n])


def family_theory_text(n: int, inner_labs=(), read_out: str = "1") -> str:
    """YAML text of the n-party theory (see the module docstring)."""
    ps = party_names(n)
    inner_labs = tuple(inner_labs)
    if any(p not in ps for p in inner_labs) or read_out not in SETTINGS:
        raise InputError(f"inner observers must sit in labs of {list(ps)} and be read out at 1 or 2")
    lines = [f"title: {n} parties, two settings each, generated", "scenario:", "  parties:"]
    lines += [f"    {p}: {{settings: [1, 2], outcomes: [+1, -1]}}" for p in ps]
    if inner_labs:
        lines.append("  inner_observers:")
        lines += [f"    {p}_in: {{lab: {p}, outcomes: [+1, -1], read_out_at: {read_out}}}" for p in inner_labs]
    lines.append("assumptions:")
    lines.append("  counterfactual:")
    lines.append("    says: an outcome exists for every setting of every party, jointly")
    lines.append("    source: A. Fine, Phys. Rev. Lett. 48, 291 (1982)")
    lines.append(f"    counterfactual: [{', '.join(ps)}]")
    cf = ", ".join(f'"{p}@*"' for p in ps)
    lines.append("  setting-independence:")
    lines.append("    says: the counterfactual outcomes do not depend on the settings chosen")
    lines.append("    source: A. Fine, Phys. Rev. Lett. 48, 291 (1982)")
    lines.append(f"    independent: {{events: [{cf}], of: [{', '.join(p + '.setting' for p in ps)}]}}")
    recs = [f"{p}_in" for p in inner_labs]
    if inner_labs:
        lines.append("  absoluteness:")
        lines.append("    says: the inner records have single values in every run, jointly with all outcomes")
        lines.append("    source: K.-W. Bong et al., Nature Physics 16, 1199 (2020), arXiv:1907.05607")
        lines.append(f"    absolute: [{', '.join(recs)}]")
    for p in ps:
        others = [q for q in ps if q != p] + recs
        lines.append(f"  agency-{p}:")
        lines.append(f"    says: the other labs' outcomes and all inner records, jointly, are uncorrelated with "
                     f"{p}'s setting")
        lines.append("    source: K.-W. Bong et al., Nature Physics 16, 1199 (2020); arXiv:2205.12223")
        lines.append(f"    independent: {{events: [{', '.join(others)}], of: [{p}.setting]}}")
    lines.append("bundles:")
    lines.append("  Bell-local: [counterfactual, setting-independence]")
    agency = ", ".join(f"agency-{p}" for p in ps)
    lines.append(f"  no-signalling: [{agency}]")
    if inner_labs:
        lines.append(f"  local-friendliness: [absoluteness, {agency}]")
    return "\n".join(lines) + "\n"


def family_theory(n: int, inner_labs=(), read_out: str = "1") -> Theory:
    """The generated n-party theory, loaded (see :func:`family_theory_text`)."""
    labs = "".join(inner_labs)
    return load_theory_text(family_theory_text(n, inner_labs, read_out), f"<{n} parties{', inner ' + labs if labs else ''}>")


# -- states with Gaussian-integer amplitudes ----------------------------------------
@dataclass(frozen=True)
class IntState:
    """An unnormalised n-qubit pure state with amplitudes in Z[i] (real, imag int arrays, shape (2,)*n)."""

    label: str
    re: np.ndarray
    im: np.ndarray

    @property
    def n(self) -> int:
        return self.re.ndim


def ghz_state(n: int) -> IntState:
    re = np.zeros((2,) * n, dtype=np.int64)
    re[(0,) * n] = 1
    re[(1,) * n] = 1
    return IntState(f"GHZ_{n}", re, np.zeros_like(re))


def w_state(n: int) -> IntState:
    re = np.zeros((2,) * n, dtype=np.int64)
    for k in range(n):
        idx = [0] * n
        idx[k] = 1
        re[tuple(idx)] = 1
    return IntState(f"W_{n}", re, np.zeros_like(re))


def graph_state(n: int, edges, label: str = "") -> IntState:
    """prod_{(i,j) in edges} CZ_ij |+>^n: amplitude (-1)^(number of edges with both ends 1)."""
    re = np.ones((2,) * n, dtype=np.int64)
    for z in itertools.product((0, 1), repeat=n):
        if sum(z[i] * z[j] for i, j in edges) % 2:
            re[z] = -1
    return IntState(label or f"graph_{n}{sorted(edges)}", re, np.zeros_like(re))


def ring_graph(n: int) -> IntState:
    return graph_state(n, [(i, (i + 1) % n) for i in range(n)], f"ring_{n}")


def line_graph(n: int) -> IntState:
    return graph_state(n, [(i, i + 1) for i in range(n - 1)], f"line_{n}")


def star_graph(n: int) -> IntState:
    return graph_state(n, [(0, i) for i in range(1, n)], f"star_{n}")


STATES = {"ghz": ghz_state, "w": w_state, "ring": ring_graph, "line": line_graph, "star": star_graph}


def state_by_name(name: str, n: int) -> IntState:
    if name not in STATES:
        raise InputError(f"no state family '{name}'", hint="one of: " + ", ".join(STATES))
    return STATES[name](n)


def _apply(re, im, axis, mre, mim):
    """Contract a 2x2 Gaussian-integer matrix into one axis (exact int64)."""
    r = np.tensordot(mre, re, axes=([1], [axis])) - np.tensordot(mim, im, axes=([1], [axis]))
    i = np.tensordot(mre, im, axes=([1], [axis])) + np.tensordot(mim, re, axes=([1], [axis]))
    return np.moveaxis(r, 0, axis), np.moveaxis(i, 0, axis)


def zero_table(state: IntState, bases: tuple[str, ...]) -> np.ndarray:
    """Boolean array over outcome indices (0 = +1): True where the outcome never occurs."""
    re, im = state.re, state.im
    for k, b in enumerate(bases):
        mre, mim = _BASES[b]
        re, im = _apply(re, im, k, mre, mim)
    return (re == 0) & (im == 0)


def support_pattern(state: IntState, choice, title: str = "", source: str = "") -> SupportPattern:
    """The exact support of *state* when party i measures basis choice[i][x] at setting x+1.

    *choice*: per party a pair of basis names (setting 1, setting 2), e.g.
    ``[("X", "Y")] * n``.  Every event is listed (possible or impossible).
    """
    n = state.n
    ps = party_names(n)
    if len(choice) != n or any(len(c) != 2 or any(b not in _BASES for b in c) for c in choice):
        raise InputError("each party needs two bases from " + ", ".join(_BASES))
    possible, impossible = set(), set()
    outs = list(itertools.product(range(2), repeat=n))
    for st in itertools.product(range(2), repeat=n):
        zeros = zero_table(state, tuple(choice[i][x] for i, x in enumerate(st)))
        s = tuple(SETTINGS[x] for x in st)
        for a in outs:
            (impossible if zeros[a] else possible).add((s, tuple(OUTCOMES[k] for k in a)))
    if not possible:
        raise InputError("the state is zero")
    return SupportPattern(ps, frozenset(possible), frozenset(impossible), title or f"{state.label}, " + " ".join(f"{p}:{a}/{b}" for p, (a, b) in zip(ps, choice)),
                          source, "exact (Gaussian-integer amplitudes)")


def ghz_xy_pattern(n: int) -> SupportPattern:
    """GHZ_n with X at setting 1 and Y at setting 2 (the Mermin perfect correlations)."""
    return support_pattern(ghz_state(n), [("X", "Y")] * n, f"GHZ, {n} parties, setting 1 = X, setting 2 = Y",
                           "Greenberger, Horne, Shimony, Zeilinger, Am. J. Phys. 58, 1131 (1990); "
                           "Mermin, PRL 65, 1838 (1990)")


def hardy_ladder(n: int) -> SupportPattern:
    """The n-party Hardy pattern in ladder form; all other events open.

    * p(+1, …, +1 | 1, …, 1) > 0;
    * for each party k: p(a_k = -1, a_j = +1 for j != k | k at 2, the others at 1) = 0
      ("if all others see +1 at setting 1, k sees +1 at setting 2");
    * p(+1, …, +1 | 2, …, 2) = 0.

    For n = 2 these are Hardy's four conditions (L. Hardy, PRL 71, 1665
    (1993)); for n = 3 the same chain of "if … then" conditions over
    settings with one party changed is the three two-level form discussed by
    S. K. Choudhary et al., arXiv:0807.4414 (from memory: that paper's exact
    list of zero probabilities may differ; the logic here is stated in full
    and checked on its own terms).  Under Bell locality a hidden state with
    all setting-1 values +1 forces every setting-2 value to +1, against the
    last condition.
    """
    ps = party_names(n)
    one, two = ("1",) * n, ("2",) * n
    plus = ("+1",) * n
    possible = {(one, plus)}
    impossible = {(two, plus)}
    for k in range(n):
        s = tuple("2" if j == k else "1" for j in range(n))
        a = tuple("-1" if j == k else "+1" for j in range(n))
        impossible.add((s, a))
    return SupportPattern(ps, frozenset(possible), frozenset(impossible), f"Hardy ladder, {n} parties",
                          "L. Hardy, PRL 71, 1665 (1993); ladder form for n parties (see docstring)")
