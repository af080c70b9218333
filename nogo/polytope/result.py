"""The exact description of a bundle's set: vertices, equations, facets."""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field
from fractions import Fraction

from ..inequality import Inequality
from ..scenario import Scenario
from .frame import Frame
from .ints import Point

@dataclass
class HullFacet:
    a: tuple[int, ...]  # coefficients over the frame's coordinates
    b: int
    verified: bool | None  # True: Farkas bound checked exactly; None: not yet asked (partial result)
    tight: int = 0  # number of vertices on it
    bound: Fraction | None = None  # the certified maximum (== b for a facet)
    method: str = ""
    certificate: tuple | None = None  # stored Farkas multipliers (integers, denominator), when kept


@dataclass
class Polytope:
    """The exact description of the behaviours a bundle allows."""

    scenario: Scenario
    label: str
    assumptions: tuple[str, ...]
    frame: Frame
    vertices: list[Point]  # full coordinates, each with a certified preimage in the model
    equations: list[tuple[tuple[int, ...], Fraction]]  # h·p = value on all of P (certified both ways)
    facets: list[HullFacet]
    status: str  # "complete" | "partial"
    stats: dict = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    fingerprint: str = ""
    # the symmetric route: (index of the representative, member indices) per class, and the group
    classes: list[tuple[int, list[int]]] | None = None
    group_order: int | None = None
    group_generators: list[str] = field(default_factory=list)
    class_sizes: list[int] | None = None  # facets per class (with the canonical graph, classes may be listed alone)

    @property
    def dim(self) -> int:
        return self.frame.dim

    def inequality(self, f: HullFacet, name: str = "") -> Inequality:
        from ..inequality import Marginal

        coeffs = {c: v for c, v in zip(self.scenario.coordinates(), self.frame.full(f.a)) if v}
        marg = frozenset()
        if self.frame.kind != "probabilities":
            n = len(self.scenario.parties)
            marg = frozenset(Marginal(tuple(self.scenario.party_names[i] for i in sub))
                             for k in range(1, n) for sub in itertools.combinations(range(n), k))
        return Inequality(self.scenario, coeffs, Fraction(f.b), name, self.frame.text(f.a, f.b), "", marg)

