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
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import sympy

from ..errors import InputError, Where, suggest
from ..scenario import Scenario, check_keys
from ..theory import Theory, load_theory
from ..yamlread import YMap, read_yaml_file, read_yaml_text
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

    # -- what each party effectively does --------------------------------------
    def read_out(self, party: str, setting: str):
        """The inner observer read out at (party, setting), or None."""
        for o in self.scenario.inner:
            if o.lab == party and o.read_out_at == setting:
                return o
        return None

    def effective(self, party: str, setting: str) -> Measurement:
        """The measurement that yields the party's outcome at this setting.

        At a read-out setting the party reports the inner observer's record,
        so its outcome a occurs on the observer's projectors Q_k with
        relabel[k] = a; at other settings the observer's measurement has been
        undone and the party's own measurement acts on the original state.
        """
        o = self.read_out(party, setting)
        if o is None:
            return self.measurements[(party, setting)]
        Q = self.inner[o.name]
        n_out = len(self.scenario.party(party).outcomes)
        d = Q.dim
        Ps = [np.zeros((d, d), dtype=complex) for _ in range(n_out)]
        ex = [sympy.zeros(d, d) for _ in range(n_out)] if Q.exact is not None else None
        for k, a in enumerate(o.relabel):
            Ps[a] = Ps[a] + Q.projectors[k]
            if ex is not None:
                ex[a] = ex[a] + Q.exact[k]
        # Observers of the same lab act in declaration order; an earlier one's
        # measurement has dephased the system before this one measures (Heisenberg
        # picture: E -> sum_k Q_k E Q_k).  With one observer per lab nothing changes.
        earlier = []
        for other in self.scenario.inner:
            if other.name == o.name:
                break
            if other.lab == party and other.name in self.inner:
                earlier.append(self.inner[other.name])
        for R in reversed(earlier):
            Ps = [sum(Rk @ E @ Rk for Rk in R.projectors) for E in Ps]
            if ex is not None and R.exact is not None:
                ex = [sum((Rk * E * Rk for Rk in R.exact), sympy.zeros(d, d)) for E in ex]
            else:
                ex = None
        return Measurement(tuple(Ps), tuple(ex) if ex is not None else None, f"{o.name}'s record ({Q.label})")

    def povms(self) -> list[list[Measurement]]:
        """Effective measurements, indexed [party][setting index]."""
        return [[self.effective(p.name, x) for x in p.settings] for p in self.scenario.parties]

    @property
    def is_exact(self) -> bool:
        return self.state.exact is not None and all(m.exact is not None for row in self.povms() for m in row)

    def with_state(self, state: State) -> "Experiment":
        return Experiment(self.scenario, state, dict(self.measurements), dict(self.inner), self.title,
                          self.theory_file, self.file)

    def check(self, where: Where | None = None) -> None:
        """Every setting has a measurement of the right size; dimensions agree."""
        sc = self.scenario
        if len(self.state.dims) != len(sc.parties):
            raise InputError(f"the state has {len(self.state.dims)} subsystems, the scenario {len(sc.parties)} parties",
                             where)
        for i, p in enumerate(sc.parties):
            for x in p.settings:
                o = self.read_out(p.name, x)
                if o is not None:
                    if (p.name, x) in self.measurements:
                        raise InputError(
                            f"{p.name} at setting {x} reads out inner observer {o.name}; it has no measurement of its own",
                            where, f"give {o.name}'s basis under 'inner_observers' and drop {p.name}'s setting {x}")
                    if o.name not in self.inner:
                        raise InputError(f"inner observer {o.name} needs a measurement (it is read out at {p.name}'s "
                                         f"setting {x})", where, f"add 'inner_observers: {{{o.name}: Z}}' or similar")
                    m = self.inner[o.name]
                    if m.outcomes != len(o.outcomes):
                        raise InputError(f"{o.name}'s measurement has {m.outcomes} outcomes, the observer {len(o.outcomes)}",
                                         where)
                elif (p.name, x) not in self.measurements:
                    raise InputError(f"no measurement for {p.name} at setting {x}", where)
                m = self.effective(p.name, x)
                if m.dim != self.state.dims[i]:
                    raise InputError(f"{p.name}'s measurement at setting {x} acts on dimension {m.dim}, "
                                     f"but {p.name}'s system has dimension {self.state.dims[i]}", where)


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
    state = state_from_yaml(data["state"], len(sc.parties), w("state", "state"))
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
        inner[o.name] = measurement_from_yaml(spec, len(o.outcomes), iw, f"inner observer {name}")
    exp = Experiment(sc, state, measurements, inner, str(data.get("title", "")), theory_file, file)
    exp.check(Where(file))
    return exp


def load_experiment(path: str | Path, theory: Theory | str | Path | None = None) -> Experiment:
    """Read an experiment file; *theory* overrides the file's own ``theory:``."""
    if theory is not None and not isinstance(theory, Theory):
        theory = load_theory(theory)
    return experiment_from_yaml(read_yaml_file(path), theory, str(path))


def load_experiment_text(text: str, theory: Theory | None = None, name: str = "<text>") -> Experiment:
    return experiment_from_yaml(read_yaml_text(text, name), theory, name)
