"""The compiled constraint system that every backend consumes.

A :class:`LinearModel` is ``rows · q = rhs, q >= 0`` over columns that stand
for entries of a hidden joint distribution (or, for mixture models, weights
of extreme responses), together with

* a *source map*: each row's :class:`RowSource` names the assumption, the
  clause and the events it came from, so results can speak in the user's
  names and never in row numbers;
* an *observation map*: each column's contribution to the observed behaviour
  p(a|s) in full probability coordinates (``scenario.coordinates()``).

All numbers are exact (:class:`fractions.Fraction`); floating-point copies
are made only for the LP solver.  Models are plain picklable data, so an
oracle call is a pure function of (model, direction) and can be shipped to
another process or machine.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

from .inequality import Coord, Inequality
from .scenario import Scenario


@dataclass(frozen=True)
class RowSource:
    """Where a row came from, in the user's names."""

    assumption: str  # assumption name, or "normalisation"
    kind: str  # "independent", "normalisation", "mixture", ...
    clause: int  # index of the clause inside the assumption (0-based)
    events: tuple[str, ...]  # the events the row speaks of
    detail: str  # the row as a person would write it


@dataclass(frozen=True)
class Column:
    """One unknown of the model.

    For the plain linear model it is q(e | s): ``settings`` s and the joint
    assignment ``values`` of the present ``events``.  Mixture models use
    ``label`` to describe a response and its weight.
    """

    settings: tuple[str, ...] | None
    events: tuple[str, ...]
    values: tuple[str, ...]
    label: str = ""

    def describe(self, scenario: Scenario) -> str:
        if self.label:
            return self.label
        ev = ", ".join(f"{e}={v}" for e, v in zip(self.events, self.values))
        st = ", ".join(f"{p}={x}" for p, x in zip(scenario.party_names, self.settings or ()))
        return f"q({ev} | {st})"


@dataclass
class LinearModel:
    scenario: Scenario
    label: str  # bundle label as the user wrote it
    assumptions: tuple[str, ...]
    columns: list[Column]
    rows: list[dict[int, Fraction]]
    rhs: list[Fraction]
    sources: list[RowSource]
    observe: list[dict[int, Fraction]]  # per column: {coordinate index: weight}
    notes: list[str] = field(default_factory=list)
    kind: str = "linear"  # "linear" or "mixture"
    extra: dict[str, Any] = field(default_factory=dict)

    @property
    def shape(self) -> tuple[int, int]:
        return len(self.rows), len(self.columns)

    def cost(self, ineq: Inequality) -> list[Fraction]:
        """The inequality's left side as a linear function of the columns."""
        c_obs = ineq.vector()
        out = []
        for obs in self.observe:
            out.append(sum((w * c_obs[i] for i, w in obs.items()), Fraction(0)))
        return out

    def behaviour(self, point: list[Fraction]) -> dict[Coord, Fraction]:
        """Observed behaviour p(a|s) of a point of the model."""
        coords = self.scenario.coordinates()
        vals = [Fraction(0)] * len(coords)
        for j, x in enumerate(point):
            if x:
                for i, w in self.observe[j].items():
                    vals[i] += w * x
        return {coords[i]: v for i, v in enumerate(vals)}
