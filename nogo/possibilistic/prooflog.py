"""Unsatisfiability logs others can check: the core as DIMACS CNF and a DRAT-style log.

Beside the human proof, a contradiction can be handed over as

* ``core.cnf`` — the clauses of the proof's facts and assumption instances
  (DIMACS CNF, the standard of the SAT competitions), with comments naming
  every variable and every clause group in the user's words;
* ``core.drat`` — the clause additions and deletions a python-sat solver
  made while refuting it (DRUP lines, the deletion-and-reverse-unit-
  propagation subset of DRAT: N. Wetzler, M. Heule, W. Hunt, "DRAT-trim",
  SAT 2014), which any DRAT checker reads.

:func:`check_rup` is a small independent reverse-unit-propagation checker
(each added clause must follow from the formula and earlier additions by unit
propagation; the empty clause must be reached), used by the tests and by
``nogo proof --log`` before the log is written.
"""

from __future__ import annotations

from dataclasses import dataclass

from pysat.solvers import Solver


@dataclass
class CoreCNF:
    n_vars: int
    clauses: list[list[int]]
    comments: list[str]

    def dimacs(self) -> str:
        lines = [f"c {c}" for c in self.comments]
        lines.append(f"p cnf {self.n_vars} {len(self.clauses)}")
        lines += [" ".join(map(str, cl)) + " 0" for cl in self.clauses]
        return "\n".join(lines) + "\n"


def latent_core_cnf(sc, witness, facts) -> CoreCNF:
    """The one-assignment reading of a core: one-hot values per (party, setting), the witness, the facts."""
    var, comments = {}, ["nogo possibilistic core, Bell locality read over one assignment per (party, setting)"]
    for i, p in enumerate(sc.parties):
        for x in p.settings:
            for o in p.outcomes:
                var[(i, x, o)] = len(var) + 1
                comments.append(f"var {var[(i, x, o)]}: {p.name}@{x} = {o}")
    cls = []
    for i, p in enumerate(sc.parties):
        for x in p.settings:
            lits = [var[(i, x, o)] for o in p.outcomes]
            cls.append(lits)
            cls += [[-lits[u], -lits[v]] for u in range(len(lits)) for v in range(u + 1, len(lits))]
    n = len(sc.parties)
    if witness is not None:
        s, a = witness
        comments.append(f"witness: p({','.join(a)}|{','.join(s)}) > 0")
        cls += [[var[(i, s[i], a[i])]] for i in range(n)]
    for s, a in facts:
        comments.append(f"clause {len(cls) + 1}: p({','.join(a)}|{','.join(s)}) = 0")
        cls.append([-var[(i, s[i], a[i])] for i in range(n)])
    return CoreCNF(len(var), cls, comments)


def joint_core_cnf(space, core: list[int]) -> CoreCNF:
    """The joint-support reading of a core: normalisation at every tuple and the groups' clauses."""
    parties = space.scenario.party_names
    comments = ["nogo possibilistic core, joint supports: var = q(e|s) > 0"]
    cls = [list(c) for c in space.hard_clauses()]
    for gi in core:
        g = space.groups[gi]
        comments.append(f"clauses {len(cls) + 1}..: {g.name(parties)}")
        cls += space.group_clauses(g)
    return CoreCNF(space.n_vars, cls, comments)


def refute(cnf: CoreCNF, solver: str = "g4") -> list[str]:
    """The solver's DRUP log of the refutation; ValueError if the clauses are satisfiable."""
    with Solver(name=solver, with_proof=True, bootstrap_with=cnf.clauses) as s:
        if s.solve():
            raise ValueError("the core is satisfiable; there is nothing to refute")
        log = list(s.get_proof() or [])
    if not log or log[-1].strip() != "0":
        log.append("0")  # refuted by unit propagation alone: the empty clause is itself a RUP step
    return log


def check_rup(cnf: CoreCNF, log: list[str]) -> str | None:
    """None when every added clause of *log* is a reverse-unit-propagation consequence and
    the empty clause is derived; otherwise what is wrong.  Deletions are ignored (sound)."""
    db = [list(c) for c in cnf.clauses]
    for k, line in enumerate(log):
        toks = line.split()
        if not toks:
            continue
        if toks[0] == "d":
            continue
        try:
            lits = [int(t) for t in toks]
        except ValueError:
            return f"line {k + 1} is not a clause: {line!r}"
        if lits[-1] != 0:
            return f"line {k + 1} does not end in 0"
        cl = lits[:-1]
        if not _rup(db, cl):
            return f"line {k + 1} ({line}) does not follow by unit propagation"
        if not cl:
            return None
        db.append(cl)
    return "the log never derives the empty clause"


def _rup(db: list[list[int]], clause: list[int]) -> bool:
    val: dict[int, bool] = {}
    for lit in clause:
        val[abs(lit)] = lit < 0  # assume the clause false
    changed = True
    while changed:
        changed = False
        for cl in db:
            free = None
            n_free = 0
            sat = False
            for lit in cl:
                v = val.get(abs(lit))
                if v is None:
                    n_free += 1
                    free = lit
                    if n_free > 1:
                        break
                elif v == (lit > 0):
                    sat = True
                    break
            if sat or n_free > 1:
                continue
            if n_free == 0:
                return True  # conflict
            val[abs(free)] = free > 0
            changed = True
    return False
