"""Inner observers modelled explicitly: the observer's memory is its own register.

The effective model (:meth:`Experiment.effective`) says what a party
reports; this module derives the same behaviour from the unitary story that
extended Wigner's-friend arguments tell (Wigner 1961; D. Frauchiger and
R. Renner, Nat. Commun. 9, 3711 (2018); K.-W. Bong et al., Nature Physics 16,
1199 (2020), arXiv:1907.05607):

* each inner observer O has a memory register of dimension |outcomes of O|,
  prepared in |0>;
* O's measurement {Q_k} is the unitary U_O = sum_k Q_k ⊗ X^k on (system ⊗
  memory), X the cyclic shift, which writes k into the memory (unitary
  because the Q_k are orthogonal projectors summing to the identity);
* the lab's observers act in declaration order: U_lab = U_{O_m} ... U_{O_1};
* when the party's setting is the read-out setting of O, the party reads O's
  memory in the computational basis and reports relabel[k];
* at any other setting the party undoes U_lab (applies its inverse) and
  measures its own projectors on the system.

:func:`explicit_behaviour` runs this literally on the global density matrix.
It must equal :func:`nogo.quantum.born.behaviour` (tests check it on random
states and measurements).
"""

from __future__ import annotations

import itertools
from functools import reduce

import numpy as np

from ..inequality import Coord
from ..scenario import ALWAYS
from .experiment import Experiment


def record_unitary(Q: tuple[np.ndarray, ...]) -> np.ndarray:
    """U = sum_k Q_k ⊗ X^k on (system ⊗ memory), memory dimension len(Q)."""
    m = len(Q)
    X = np.roll(np.eye(m), 1, axis=0)  # X|j> = |j+1 mod m>
    return sum(np.kron(Qk, np.linalg.matrix_power(X, k)) for k, Qk in enumerate(Q))


def _embed(Uo: np.ndarray, fac: list[int], j: int) -> np.ndarray:
    """An operator on (system ⊗ memory_j) as an operator on the whole lab (factors ``fac``)."""
    dl = int(np.prod(fac))
    full_op = np.zeros((dl, dl), dtype=complex)
    Tt = Uo.reshape(fac[0], fac[1 + j], fac[0], fac[1 + j])
    for idx_out in itertools.product(*(range(f) for f in fac)):
        r = np.ravel_multi_index(idx_out, fac)
        for s0 in range(fac[0]):
            for m in range(fac[1 + j]):
                c = Tt[idx_out[0], idx_out[1 + j], s0, m]
                if c != 0:
                    idx_in = list(idx_out)
                    idx_in[0], idx_in[1 + j] = s0, m
                    full_op[r, np.ravel_multi_index(idx_in, fac)] += c
    return full_op


def _initial_state(exp: Experiment, labs) -> np.ndarray:
    """rho_sys with every memory in |0>, factors arranged lab by lab (sys_i, mem_i)."""
    n = len(labs)
    mem_dims = [int(np.prod(d[1:])) if len(d) > 1 else 1 for _, _, d in labs]
    mem0 = [np.zeros((m, m)) for m in mem_dims]
    for z in mem0:
        z[0, 0] = 1.0
    full = np.kron(exp.state.rho, reduce(np.kron, mem0, np.eye(1)))
    dims_in = list(exp.state.dims) + mem_dims
    perm = [k for i in range(n) for k in (i, n + i)]
    T = full.reshape(dims_in * 2).transpose(perm + [2 * n + k for k in perm])
    D = int(np.prod([np.prod(d) for _, _, d in labs]))
    return T.reshape(D, D)


def _lab_unitary(exp: Experiment, obs, dims: list[int]) -> np.ndarray:
    """U_lab = U_{O_m} ... U_{O_1}: each observer of the lab records into its memory."""
    U = np.eye(int(np.prod(dims)), dtype=complex)
    for j, o in enumerate(obs):
        U = _embed(record_unitary(exp.inner[o.name].projectors), dims, j) @ U
    return U


def _lab_operations(exp: Experiment, p, obs, dims: list[int], U: np.ndarray):
    """Per setting of the lab: the operation before the final measurement, and its POVM."""
    dl = int(np.prod(dims))
    ops_p, pov_p = [], []
    for x in p.settings:
        reader = next((o for o in obs if o.read_out_at != ALWAYS and o.relabel_at(x) is not None), None)
        if reader is not None:
            j = obs.index(reader)
            Es = [np.zeros((dl, dl), dtype=complex) for _ in p.outcomes]
            for k, a in enumerate(reader.relabel_at(x)):
                proj = np.zeros((dims[1 + j], dims[1 + j]))
                proj[k, k] = 1.0
                mats = [np.eye(f) for f in dims]
                mats[1 + j] = proj
                Es[a] += reduce(np.kron, mats)
            ops_p.append(np.eye(dl))  # nothing undone: the party reads the memory
            pov_p.append(Es)
        else:
            M = exp.measurements[(p.name, x)].projectors
            rest = int(np.prod(dims[1:])) if len(dims) > 1 else 1
            pov_p.append([np.kron(P, np.eye(rest)) for P in M])
            ops_p.append(U.conj().T)  # undo every record of this lab
    return ops_p, pov_p


def explicit_behaviour(exp: Experiment) -> dict[Coord, float]:
    """Behaviour from the register model: record unitaries, read-out or undo, measure."""
    sc = exp.scenario
    # Lab i's space: system_i ⊗ memory of each of its observers (declaration order).
    labs = []
    for i, p in enumerate(sc.parties):
        obs = [o for o in sc.inner if o.lab == p.name and o.name in exp.inner]
        labs.append((p, obs, [exp.state.dims[i]] + [len(o.outcomes) for o in obs]))
    U_lab = [_lab_unitary(exp, obs, dims) for _, obs, dims in labs]
    U_all = reduce(np.kron, U_lab)
    state = _initial_state(exp, labs)
    after = U_all @ state @ U_all.conj().T  # every inner observer has measured
    ops, povms = zip(*(_lab_operations(exp, p, obs, dims, U) for (p, obs, dims), U in zip(labs, U_lab)))

    out: dict[Coord, float] = {}
    for s, xs in zip(sc.setting_tuples(), itertools.product(*(range(len(p.settings)) for p in sc.parties))):
        V = reduce(np.kron, [ops[i][x] for i, x in enumerate(xs)])
        st = V @ after @ V.conj().T
        for a, ks in zip(sc.outcome_tuples(), itertools.product(*(range(len(p.outcomes)) for p in sc.parties))):
            E = reduce(np.kron, [povms[i][x][k] for i, (x, k) in enumerate(zip(xs, ks))])
            out[(s, a)] = float(np.real(np.trace(E @ st)))
    return out
