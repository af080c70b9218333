"""The register model of nested observers, run literally: memories, record and copy unitaries, undoing.

The definition of :mod:`nogo.quantum.labs` (after K.-W. Bong et al.,
Nature Physics 16, 1199 (2020), arXiv:1907.05607; D. Frauchiger and
R. Renner, Nat. Commun. 9, 3711 (2018)) in matrices: lab L's space is
S_L ⊗ M_P ⊗ M_o1 ⊗ ... (a memory per node, |0> at the start).  For one
assignment of the lab's setting variables the lab's process V is built
node by node, from the innermost observers out:

* a node's children run in declaration order (their processes multiply);
* a read-out is the copy unitary |k>_r |m>_N -> |k>_r |m + relabel_r(k)>_N;
* otherwise the node applies the inverse of its children's processes and
  its record unitary sum_k Q_k ⊗ X^k (S_L ⊗ M_N).

The lab's outcome a then has the POVM E_a = <0| V† (|a><a| on M_P) V |0>
on S_L (memories in |0>), and the behaviour is the Born rule on the
product of the labs' POVMs.  Nothing here uses the effective form
(:meth:`Experiment.reading_measurement`): the two must agree, and
tests/test_quantum_choices.py checks that they do on random states and
measurements.  Floating point only: a cross-check, never a verdict.
"""

from __future__ import annotations

from math import prod

import numpy as np

from ..inequality import Coord
from ..scenario import ALWAYS
from .born import behaviour_array
from .experiment import Experiment
from .inner import record_unitary


def _op_on(dims: list[int], targets: list[int], M: np.ndarray) -> np.ndarray:
    """M acting on the factors *targets* (in that order) of a space with factors *dims*."""
    rest = [i for i in range(len(dims)) if i not in targets]
    order = list(targets) + rest
    full = np.kron(M, np.eye(prod(dims[i] for i in rest)))
    n = len(dims)
    inv = list(np.argsort(order))
    T = full.reshape([dims[i] for i in order] * 2).transpose(inv + [n + i for i in inv])
    return T.reshape(prod(dims), prod(dims))


def _copy(relabel: tuple[int, ...], n: int) -> np.ndarray:
    """|k>|m> -> |k>|m + relabel(k) mod n>."""
    K = len(relabel)
    C = np.zeros((K * n, K * n))
    for k in range(K):
        for m in range(n):
            C[k * n + (m + relabel[k]) % n, k * n + m] = 1.0
    return C


class _Lab:
    def __init__(self, exp: Experiment, party: str):
        sc = exp.scenario
        self.exp, self.sc = exp, sc
        self.nodes = [party] + [o.name for o in sc.inner if o.party == party]
        self.outs = {party: len(sc.party(party).outcomes)} | {o.name: len(o.outcomes) for o in sc.inner
                                                            if o.party == party}
        self.kids = {n: [o for o in sc.inner if o.lab == n] for n in self.nodes}
        self.dims = [exp.state.dims[sc.labs.index(sc.party(party))]] + [self.outs[n] for n in self.nodes]

    def _measurement(self, node: str, setting):
        e = self.exp
        if node == self.nodes[0]:
            return e.measurements.get((node, setting))
        return e.inner_at.get((node, setting)) if setting is not None else e.inner.get(node)

    def process(self, node: str, assign: dict[str, str]) -> np.ndarray:
        D = prod(self.dims)
        U = np.eye(D, dtype=complex)
        for c in self.kids[node]:
            U = self.process(c.name, assign) @ U
        own = assign.get(node)
        reader = next((c for c in self.kids[node] if c.relabel_at(own) is not None), None)
        j = 1 + self.nodes.index(node)
        if reader is not None:
            C = _copy(reader.relabel_at(own), self.outs[node])
            return _op_on(self.dims, [1 + self.nodes.index(reader.name), j], C) @ U
        m = self._measurement(node, own)
        if m is None:  # an observer with no measurement given does not measure
            return U.conj().T @ U
        return _op_on(self.dims, [0, j], record_unitary(m.projectors)) @ U.conj().T @ U

    def povm(self, assign: dict[str, str]) -> np.ndarray:
        V = self.process(self.nodes[0], assign)
        d, rest = self.dims[0], prod(self.dims[1:])
        out = []
        for a in range(self.outs[self.nodes[0]]):
            proj = np.zeros((self.outs[self.nodes[0]],) * 2)
            proj[a, a] = 1.0
            F = V.conj().T @ _op_on(self.dims, [1], proj) @ V
            out.append(F.reshape(d, rest, d, rest)[:, 0, :, 0])
        return np.array(out)


def register_behaviour(exp: Experiment) -> dict[Coord, float]:
    """The behaviour of the register model (module docstring), in floats."""
    sc = exp.scenario
    labs = [_Lab(exp, p.name) for p in sc.labs]
    home = [[i] + [k for k, q in enumerate(sc.parties) if q.choice_of and sc.observer(q.choice_of).party == p.name]
            for i, p in enumerate(sc.labs)]
    rows: list[list[np.ndarray]] = [[] for _ in labs]
    seen: list[dict] = [{} for _ in labs]
    which = []
    for s in sc.setting_tuples():
        xs = []
        for i, lab in enumerate(labs):
            key = tuple(s[k] for k in home[i])
            if key not in seen[i]:
                seen[i][key] = len(rows[i])
                rows[i].append(lab.povm({sc.parties[k].name: s[k] for k in home[i]}))
            xs.append(seen[i][key])
        which.append(tuple(xs))
    arr = behaviour_array(exp.state.rho, exp.state.dims, rows, tuple(which))
    return dict(zip(sc.coordinates(), (float(x) for x in arr)))

