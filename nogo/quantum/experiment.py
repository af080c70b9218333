"""Experiment declarations: a theory (for the scenario), a state, measurements.

File layout (our own)::

    title: Two sealed labs share a singlet
    theory: ../../theories/friends-2x3.yaml     # relative to this file
    state: singlet                              # see nogo.quantum.states
    measurements:                               # party -> setting -> measurement
      A: {2: X, 3: {bloch: [pi/4, 0]}}
      B: {2: X, 3: {bloch: [-pi/4, 0]}}
    inner_observers:                            # the basis each inner observer measures in
      A_in: Z
      B_in: Z

A party's setting at which an inner observer is read out gets *no*
measurement of its own: there the party reports the observer's record
(through the scenario's relabelling), so the observer's measurement is the
one that counts.  Every other setting needs a measurement with as many
outcomes as the party has, listed in the scenario's outcome order.

Nested observers and observers' own choices (what a lab's outcome is then:
:mod:`nogo.quantum.labs`): an observer that reads another observer's record
(at a setting of its own, or ``always``) gets no measurement there; an
observer with ``settings`` gets one measurement per setting at which it
measures itself, written like a party's (``A_f: {2: X}``).  The state has one
subsystem per lab (the parties proper; an observer's choice is no system).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import sympy

from ..errors import InputError, Where, suggest
from ..scenario import ALWAYS, Scenario, check_keys
from ..theory import Theory, load_theory
from ..yamlread import YMap, read_yaml_file, read_yaml_text
from .labs import Plan, Reading, lab_plan
from .measurements import Measurement, measurement_from_yaml
from .states import State, state_from_yaml


@dataclass
class Experiment:
    scenario: Scenario
    state: State
    measurements: dict[tuple[str, str], Measurement]  # (party, setting) measured directly
    inner: dict[str, Measurement] = field(default_factory=dict)  # inner observer -> its measurement
    title: str = ""
    theory_file: str | None = None
    file: str | None = None
    cache: dict = field(default_factory=dict, repr=False, compare=False)  # derived values (exact behaviour)
    inner_at: dict[tuple[str, str], Measurement] = field(default_factory=dict)  # (observer, own setting) -> measurement

    # -- what each lab effectively does (nogo.quantum.labs) ----------------------
    @property
    def plan(self) -> Plan:
        """The readings of every lab (refuses, with an InputError, what it cannot model)."""
        if "plan" not in self.cache:
            self.cache["plan"] = lab_plan(self.scenario)
        return self.cache["plan"]

    def read_out(self, party: str, setting: str):
        """The inner observer read out at (party, setting), or None."""
        for o in self.scenario.inner:
            if o.lab == party and o.read_out_at != ALWAYS and o.relabel_at(setting) is not None:
                return o
        return None

    def own_measurement(self, r: Reading) -> Measurement | None:
        """The measurer's own measurement of a reading (None when the experiment gives none)."""
        if r.measurer in self.scenario.party_names and self.scenario.party(r.measurer).choice_of is None:
            return self.measurements.get((r.measurer, r.setting))
        if r.setting is not None:
            return self.inner_at.get((r.measurer, r.setting))
        return self.inner.get(r.measurer)

    def reading_measurement(self, lab: int, r: Reading) -> Measurement:
        """The POVM of the lab's outcome under reading *r* (module docstring of nogo.quantum.labs).

        The measurer's projectors Q_k are merged by the composed relabelling;
        the observers that measured before it and were not undone have
        dephased the system first (Heisenberg picture: E -> sum_k R_k E R_k,
        the earliest applied last).  An earlier observer without a
        measurement in the experiment is taken not to measure.
        """
        Q = self.own_measurement(r)
        if not r.chain:
            return Q
        n_out = len(self.scenario.labs[lab].outcomes)
        d = Q.dim
        Ps = [np.zeros((d, d), dtype=complex) for _ in range(n_out)]
        ex = [sympy.zeros(d, d) for _ in range(n_out)] if Q.exact is not None else None
        for k, a in enumerate(r.relabel):
            Ps[a] = Ps[a] + Q.projectors[k]
            if ex is not None:
                ex[a] = ex[a] + Q.exact[k]
        for R in reversed([self.inner[b] for b in r.before if b in self.inner]):
            Ps = [sum(Rk @ E @ Rk for Rk in R.projectors) for E in Ps]
            if ex is not None and R.exact is not None:
                ex = [sum((Rk * E * Rk for Rk in R.exact), sympy.zeros(d, d)) for E in ex]
            else:
                ex = None
        return Measurement(tuple(Ps), tuple(ex) if ex is not None else None, f"{r.chain[-1]}'s record ({Q.label})")

    def lab_rows(self) -> tuple[list[list[Measurement]], tuple[tuple[int, ...], ...]]:
        """``rows[i]``: the effective measurement of each reading of lab i; ``which[k]``: the reading
        of each lab at the k-th settings tuple (``scenario.setting_tuples()`` order)."""
        if "rows" not in self.cache:
            plan = self.plan
            rows = [[self.reading_measurement(i, r) for r in lab.readings] for i, lab in enumerate(plan.labs)]
            self.cache["rows"] = (rows, plan.which)
        return self.cache["rows"]

    def effective(self, party: str, setting: str) -> Measurement:
        """The measurement that yields the party's outcome at this setting.

        At a read-out setting the party reports the inner observer's record,
        so its outcome a occurs on the observer's projectors Q_k with
        relabel[k] = a; at other settings the observer's measurement has been
        undone and the party's own measurement acts on the original state.
        Undefined (ValueError) when an observer of the lab chooses: the
        lab's measurement then depends on that choice too (use :meth:`lab_rows`).
        """
        plan = self.plan
        i = self.scenario.party_index(party)
        if self.scenario.parties[i].choice_of is not None:
            raise ValueError(f"{party} is an observer's choice, not a lab: it has no measurement")
        lab = plan.labs[i]
        if len(lab.variables) > 1:
            raise ValueError(f"lab {party}'s measurement depends on the choices of "
                             f"{', '.join(self.scenario.parties[k].name for k in lab.variables[1:])}")
        k = next(k for k, s in enumerate(self.scenario.setting_tuples()) if s[i] == setting)
        return self.lab_rows()[0][i][plan.which[k][i]]

    def povms(self) -> list[list[Measurement]]:
        """Effective measurements, indexed [party][setting index] (labs without choosing observers)."""
        return [[self.effective(p.name, x) for x in p.settings] for p in self.scenario.labs]

    @property
    def is_exact(self) -> bool:
        return self.state.exact is not None and all(m.exact is not None for row in self.lab_rows()[0] for m in row)

    def with_state(self, state: State) -> "Experiment":
        return Experiment(self.scenario, state, dict(self.measurements), dict(self.inner), self.title,
                          self.theory_file, self.file, inner_at=dict(self.inner_at))

    def check(self, where: Where | None = None) -> None:
        """Every reading has a measurement of the right size; dimensions agree."""
        sc = self.scenario
        if len(self.state.dims) != len(sc.labs):
            raise InputError(f"the state has {len(self.state.dims)} subsystems, the scenario {len(sc.labs)} labs",
                             where)
        self._check_not_measuring(where)
        for i, lab in enumerate(self.plan.labs):
            for r in lab.readings:
                m = self._needed(lab.lab, r, where)
                if m.dim != self.state.dims[i]:
                    what = f"{r.measurer}'s measurement" + (f" at setting {r.setting}" if r.setting else "")
                    raise InputError(f"{what} acts on dimension {m.dim}, "
                                     f"but {lab.lab}'s system has dimension {self.state.dims[i]}", where)

    def _needed(self, party: str, r: Reading, where) -> Measurement:
        m = self.own_measurement(r)
        if m is not None:
            return m
        if not r.chain:
            raise InputError(f"no measurement for {r.measurer} at setting {r.setting}", where)
        at = f" at its setting {r.setting}" if r.setting else ""
        if r.setting is None:
            how = f"add 'inner_observers: {{{r.measurer}: Z}}' or similar"
        else:
            how = f"add 'inner_observers: {{{r.measurer}: {{{r.setting}: Z}}}}' or similar"
        raise InputError(f"inner observer {r.measurer} needs a measurement{at} (its record is read out by "
                         f"{' -> '.join(r.chain[1:] + (party,))})", where, how)

    def _check_not_measuring(self, where) -> None:
        """Measurements given where the declared node reads someone else's record instead."""
        sc = self.scenario
        for (pname, x) in self.measurements:
            o = self.read_out(pname, x)
            if o is not None:
                raise InputError(
                    f"{pname} at setting {x} reads out inner observer {o.name}; it has no measurement of its own",
                    where, f"give {o.name}'s basis under 'inner_observers' and drop {pname}'s setting {x}")
        for (name, x) in self.inner_at:
            o = self.read_out(name, x) or next((c for c in sc.inner if c.lab == name and c.read_out_at == ALWAYS), None)
            if o is not None:
                raise InputError(f"{name} at its setting {x} reads out inner observer {o.name}; it has no "
                                 f"measurement of its own", where, f"drop {name}'s setting {x}")
        for name in self.inner:
            o = next((c for c in sc.inner if c.lab == name and c.read_out_at == ALWAYS), None)
            if o is not None:
                raise InputError(f"{name} reads out inner observer {o.name} in every run; it has no measurement "
                                 f"of its own", where, f"give {o.name}'s measurement instead")


def experiment_from_yaml(data, theory: Theory | None = None, file: str | None = None) -> Experiment:
    if not isinstance(data, dict):
        raise InputError("an experiment file is a mapping with 'theory', 'state' and 'measurements'", Where(file))
    check_keys(data, {"title", "says", "theory", "state", "measurements", "inner_observers"}, "")
    w = data.where if isinstance(data, YMap) else (lambda k=None, p=None: Where(file, None, p))
    theory_file = None
    if theory is None:
        if "theory" not in data:
            raise InputError("the experiment names no 'theory' (the file that declares its scenario)", w(None))
        tpath = Path(str(data["theory"]))
        if not tpath.is_absolute() and file:
            tpath = Path(file).resolve().parent / tpath
        theory_file = str(tpath)
        try:
            theory = load_theory(tpath)
        except InputError as exc:
            if exc.message == "no such file":
                raise InputError(f"no theory file at {tpath}", w("theory", "theory")) from None
            raise
    sc = theory.scenario
    if "state" not in data:
        raise InputError("the experiment has no 'state'", w(None))
    state = state_from_yaml(data["state"], len(sc.labs), w("state", "state"))
    meas_raw = data.get("measurements")
    if not isinstance(meas_raw, dict):
        raise InputError("'measurements' maps each party to {setting: measurement}", w("measurements", "measurements"))
    measurements: dict[tuple[str, str], Measurement] = {}
    for pname, per in meas_raw.items():
        pw = meas_raw.where(pname, f"measurements.{pname}") if isinstance(meas_raw, YMap) else Where(file)
        party = sc.party(str(pname), pw)
        if not isinstance(per, dict):
            raise InputError(f"measurements of {pname} map each setting to a measurement", pw)
        for x, spec in per.items():
            xw = per.where(x, f"measurements.{pname}.{x}") if isinstance(per, YMap) else pw
            if str(x) not in party.settings:
                raise InputError(f"party {pname} has no setting '{x}'", xw, suggest(str(x), party.settings))
            measurements[(party.name, str(x))] = measurement_from_yaml(spec, len(party.outcomes), xw,
                                                                       f"{pname} at setting {x}")
    inner: dict[str, Measurement] = {}
    inner_at: dict[tuple[str, str], Measurement] = {}
    inner_raw = data.get("inner_observers") or {}
    if not isinstance(inner_raw, dict):
        raise InputError("'inner_observers' maps each inner observer to the measurement it makes",
                         w("inner_observers", "inner_observers"))
    names = [o.name for o in sc.inner]
    for name, spec in inner_raw.items():
        iw = inner_raw.where(name, f"inner_observers.{name}") if isinstance(inner_raw, YMap) else Where(file)
        if str(name) not in names:
            raise InputError(f"the scenario has no inner observer '{name}'", iw, suggest(str(name), names))
        o = sc.observer(str(name))
        if o.settings:
            _chooser_measurements(o, spec, iw, inner_at)
        else:
            inner[o.name] = measurement_from_yaml(spec, len(o.outcomes), iw, f"inner observer {name}")
    exp = Experiment(sc, state, measurements, inner, str(data.get("title", "")), theory_file, file,
                     inner_at=inner_at)
    exp.check(Where(file))
    return exp


def _chooser_measurements(o, spec, where: Where, out: dict) -> None:
    """An observer with choices of its own: one measurement per setting at which it reads no one."""
    if not isinstance(spec, dict) or not all(str(x) in o.settings for x in spec):
        raise InputError(f"inner observer {o.name} chooses among settings {list(o.settings)}: give a measurement "
                         f"for each setting at which it measures itself", where,
                         f"for example '{o.name}: {{{o.settings[-1]}: X}}'")
    for x, m in spec.items():
        xw = spec.where(x, f"{where.key}.{x}") if isinstance(spec, YMap) else where
        out[(o.name, str(x))] = measurement_from_yaml(m, len(o.outcomes), xw, f"{o.name} at its setting {x}")


def load_experiment(path: str | Path, theory: Theory | str | Path | None = None) -> Experiment:
    """Read an experiment file; *theory* overrides the file's own ``theory:``."""
    if theory is not None and not isinstance(theory, Theory):
        theory = load_theory(theory)
    return experiment_from_yaml(read_yaml_file(path), theory, str(path))


def load_experiment_text(text: str, theory: Theory | None = None, name: str = "<text>") -> Experiment:
    return experiment_from_yaml(read_yaml_text(text, name), theory, name)
