"""What yields a lab's outcome: read-out chains, undone measurements, observers' own choices.

The quantum account of a declared scenario (the standard one of extended
Wigner's-friend arguments: E. P. Wigner 1961; D. Frauchiger and R. Renner,
Nat. Commun. 9, 3711 (2018); K.-W. Bong et al., Nature Physics 16, 1199
(2020), arXiv:1907.05607), for every lab L = a party P with the tree of
inner observers whose ``lab:`` chain ends at P:

* L holds the system S_L (factor L of the state) and one memory register
  M_N per node N of the tree (the party and every observer), prepared |0>.
  A measurement {Q_k} by N is the record unitary sum_k Q_k ⊗ X^k on
  S_L ⊗ M_N; N reading an observer r is the copy unitary
  |k>_r |m>_N -> |k>_r |m + relabel_r(k)>_N.
* A node N with children c_1 .. c_m (declaration order) acts, in a run with
  given settings, as follows: (1) each child runs its own process
  (recursively, with its own choice when it has one) on the system as the
  earlier children left it; (2) if a child r is read out at N's setting
  (N's own choice for an observer with ``settings``; ``always`` for every
  run), N copies r's record into M_N; otherwise N *undoes* step (1) (applies
  its inverse) and records its own measurement at its setting on S_L.
* The party's outcome is the content of M_P.  An observer's choice is a
  classical register that leaves the lab with the run: it is not undone
  (the undo is controlled on it), so the choice party ``NAME.setting`` has
  its one outcome ``c`` with probability one.

For read-out chains this gives, per lab and per assignment of the lab's
setting variables, a :class:`Reading`: the node whose own measurement acts
on the system (the *measurer*), the composed relabelling from the
measurer's outcomes to the lab's, and the observers that measured before it
and were not undone (``before``, in time order).  The lab's outcome then has
the POVM ``D_1(D_2(... D_t(E)))`` with ``E_a = sum_{relabel(k) = a} Q_k`` and
``D_i(E) = sum_k R_k E R_k`` for the i-th observer of ``before`` (its record
unitary, its memory traced out, is the dephasing channel).  This holds
when every observer in ``before`` is *plain* (no observers inside it, no
choices): its process is then one record unitary.  A declaration whose
readings need an earlier observer that is not plain is refused
(:func:`lab_plan` raises an :class:`InputError` that says so); the register
model of :mod:`nogo.quantum.registers` runs the definition above literally
and is the cross-check of this effective form.

With one observer per lab, read out at one setting, this is the model of
:mod:`nogo.quantum.inner` (Bong et al. 2020); for a chain read out
``always`` it composes (a friend of a friend read out always is the friend
itself, relabelled); for an observer with choices the lab's POVM depends
on the lab's own setting *and* on the observer's choice.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

from ..errors import InputError
from ..scenario import ALWAYS, InnerObserver, Scenario


@dataclass(frozen=True)
class Reading:
    """What yields a lab's outcome in the runs of one assignment of its setting variables."""

    measurer: str  # the party or inner observer whose own measurement acts on the lab's system
    setting: str | None  # the measurer's own setting (None: an observer without choices)
    relabel: tuple[int, ...]  # measurer's outcome index -> the lab's outcome index (chain composed)
    chain: tuple[str, ...] = ()  # observers whose records carry the outcome to the party, measurer first
    before: tuple[str, ...] = ()  # plain observers that measured before the measurer, not undone (time order)

    @property
    def label(self) -> str:
        """A setting label for the measurement, in the user's names: ``A=2``, ``A_g``, ``A_f=2``."""
        return self.measurer if self.setting is None else f"{self.measurer}={self.setting}"

    def words(self) -> str:
        own = f"{self.measurer}'s measurement" + (f" at its setting {self.setting}" if self.setting else "")
        via = (", its record read out" + (f" through {', '.join(self.chain[1:])}" if self.chain[1:] else "")
               if self.chain else "")
        deph = f", after {', '.join(self.before)} measured" if self.before else ""
        return own + via + deph


@dataclass(frozen=True)
class LabPlan:
    lab: str  # the party
    variables: tuple[int, ...]  # indices into scenario.parties of the setting variables of this lab
    readings: tuple[Reading, ...]  # distinct readings, in order of first use


@dataclass(frozen=True)
class Plan:
    labs: tuple[LabPlan, ...]
    which: tuple[tuple[int, ...], ...]  # per settings tuple (scenario order): the reading index of each lab


def _children(scenario: Scenario) -> dict[str, list[InnerObserver]]:
    kids: dict[str, list[InnerObserver]] = {}
    for o in scenario.inner:
        kids.setdefault(o.lab, []).append(o)
    return kids


def _resolve(node: str, outcomes: int, own: str | None, kids, assignment: dict[str, str]) -> Reading:
    """The reading of *node* (party or observer) given the settings of the lab's choosers."""
    mine = kids.get(node, [])
    reader = next((c for c in mine if c.relabel_at(own) is not None), None)
    if reader is None:
        return Reading(node, own, tuple(range(outcomes)))
    inner = _resolve(reader.name, len(reader.outcomes), assignment.get(reader.name), kids, assignment)
    earlier = mine[:mine.index(reader)]
    for c in earlier:
        if kids.get(c.name) or c.settings:
            what = "observers inside its lab" if kids.get(c.name) else "choices of its own"
            raise InputError(
                f"cannot model lab {reader.party}: inner observer {c.name} measures before {reader.name} "
                f"(declared earlier in {node}'s lab) and has {what}; nogo.quantum models an earlier observer "
                f"that is not undone as one plain measurement only",
                hint=f"declare {reader.name} before {c.name}, or give {c.name} no observers and no choices")
    shown = reader.relabel_at(own)
    return Reading(inner.measurer, inner.setting, tuple(shown[i] for i in inner.relabel),
                   inner.chain + (reader.name,), tuple(c.name for c in earlier) + inner.before)


def lab_plan(scenario: Scenario) -> Plan:
    """The readings of every lab and which one each settings tuple uses (see the module docstring)."""
    kids = _children(scenario)
    home = {o.name: o.party for o in scenario.inner}
    labs, tables = [], []
    for p in scenario.labs:
        i = scenario.party_index(p.name)
        variables = (i,) + tuple(k for k, q in enumerate(scenario.parties)
                                 if q.choice_of is not None and home[q.choice_of] == p.name)
        readings: list[Reading] = []
        table: dict[tuple[str, ...], int] = {}
        for combo in itertools.product(*(scenario.parties[k].settings for k in variables)):
            assignment = {scenario.parties[k].name: x for k, x in zip(variables, combo)}
            r = _resolve(p.name, len(p.outcomes), combo[0], kids, assignment)
            if r not in readings:
                readings.append(r)
            table[combo] = readings.index(r)
        labs.append(LabPlan(p.name, variables, tuple(readings)))
        tables.append(table)
    which = tuple(tuple(tab[tuple(s[k] for k in lab.variables)] for lab, tab in zip(labs, tables))
                  for s in scenario.setting_tuples())
    return Plan(tuple(labs), which)


def reading_scenario(scenario: Scenario, plan: Plan | None = None) -> Scenario:
    """The Bell scenario of the readings: one party per lab, one setting per distinct reading.

    Every reading is an independent projective measurement on its lab's
    system (up to the dephasing of ``before``, a POVM, which a larger local
    space turns into a projective one), so the quantum behaviours of the
    declared scenario are exactly the images of this scenario's quantum
    behaviours under :func:`pull_back` when no reading dephases, and a
    subset of them otherwise.
    """
    from ..scenario import Party

    plan = plan or lab_plan(scenario)
    parties = []
    for lab in plan.labs:
        p = scenario.party(lab.lab)
        parties.append(Party(p.name, tuple(r.label for r in lab.readings), p.outcomes, p.values))
    return Scenario(tuple(parties), (), (scenario.name + " (readings)").strip())


def pull_back(ineq, plan: Plan | None = None):
    """An inequality of the declared scenario as one of :func:`reading_scenario` (same value on every behaviour)."""
    from ..inequality import Inequality

    sc = ineq.scenario
    plan = plan or lab_plan(sc)
    rs = reading_scenario(sc, plan)
    n = len(plan.labs)
    s_index = {s: k for k, s in enumerate(sc.setting_tuples())}
    coeffs: dict = {}
    for (s, a), c in ineq.coeffs.items():
        if not c:
            continue
        r = plan.which[s_index[s]]
        key = (tuple(rs.parties[i].settings[r[i]] for i in range(n)), tuple(a[:n]))
        coeffs[key] = coeffs.get(key, 0) + c
    coeffs = {k: v for k, v in coeffs.items() if v}
    return Inequality(rs, coeffs, ineq.bound, ineq.name, source=ineq.source, sense=ineq.sense, shift=ineq.shift)


def reduction_note(scenario: Scenario, plan: Plan) -> str:
    """In words: the Bell scenario of the readings, and whether it is exact or a relaxation."""
    labs = "; ".join(f"{lab.lab}: {', '.join(r.label for r in lab.readings)}" for lab in plan.labs)
    exact = not any(r.before for lab in plan.labs for r in lab.readings)
    return ("observers choose: each lab's outcome comes from one of its measurements (" + labs + "); "
            "bounded on that Bell scenario, " + ("whose quantum behaviours are exactly the declared ones"
                                                  if exact else "a relaxation (some readings are dephased)"))


def describe_plan(scenario: Scenario, plan: Plan) -> list[str]:
    """What each lab's outcome comes from, per assignment of its setting variables, in the user's names."""
    lines = []
    for j, lab in enumerate(plan.labs):
        seen: dict[tuple[str, ...], int] = {}
        for s, r in zip(scenario.setting_tuples(), plan.which):
            seen.setdefault(tuple(s[k] for k in lab.variables), r[j])
        for combo, r in seen.items():
            at = ", ".join(f"{scenario.parties[k].name}{'.setting' if scenario.parties[k].choice_of else ''}={x}"
                           for k, x in zip(lab.variables, combo))
            lines.append(f"{lab.lab}'s outcome at {at}: {lab.readings[r].words()}")
    return lines
