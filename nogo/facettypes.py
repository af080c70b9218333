"""The facet list's data types: one facet, one class, the whole result.

The last typed stage before the report: :func:`nogo.facets.facets` fills a
:class:`FacetResult` from the exact polytope (:mod:`nogo.facetclasses`
names the classes); :mod:`nogo.facetexport` turns it into plain data and
:mod:`nogo.facetcompare` sets two of them side by side.  Each facet keeps
its exact evidence (the hull facet with its Farkas certificate, the
vertices tight on it); its inequality is written in the frame's notation
only when asked for.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from .inequality import Inequality
from .polytope import Frame, HullFacet, Point, Polytope
from .report import q


@dataclass
class Facet:
    """One facet: the inequality (full coordinates, written in the frame's notation) and its class."""

    index: int
    _inequality: Inequality | None  # built on first use (a list of 53,856 facets need not write them all)
    a: tuple[int, ...]  # coefficients over the frame's coordinates
    b: int
    class_name: str
    vertices: tuple[int, ...]  # indices into FacetResult.vertices that lie on it
    verified: bool | None  # True: a Farkas bound was checked exactly
    _polytope: Polytope | None = field(default=None, repr=False, compare=False)
    _hull: HullFacet | None = field(default=None, repr=False, compare=False)

    @property
    def inequality(self) -> Inequality:
        if self._inequality is None:
            self._inequality = self._polytope.inequality(self._hull, self.class_name)
        return self._inequality

    @property
    def text(self) -> str:
        return self.inequality.text


@dataclass
class FacetClass:
    name: str
    size: int
    representative: int  # facet index
    members: list[int]
    known_as: str = ""  # catalog entry and source, when recognised


@dataclass
class FacetResult:
    theory_file: str
    bundle: str
    assumptions: tuple[str, ...]
    polytope: Polytope
    facets: list[Facet]
    classes: list[FacetClass]
    symmetries: list[str]
    dropped_symmetries: list[str]
    from_cache: bool = False
    cache_file: str = ""
    seconds: float = 0.0
    group_order: int | None = None  # order of the symmetry group acting on the set (symmetric route)
    reverified: bool = False  # read from the store and re-verified there with exact checks
    warnings: list[str] = field(default_factory=list)

    @property
    def scenario(self):
        return self.polytope.scenario

    @property
    def vertices(self) -> list[Point]:
        return self.polytope.vertices

    @property
    def frame(self) -> Frame:
        return self.polytope.frame

    @property
    def dim(self) -> int:
        return self.polytope.dim

    @property
    def status(self) -> str:
        return self.polytope.status

    def by_class(self) -> dict[str, list[Facet]]:
        return {c.name: [self.facets[i] for i in c.members] for c in self.classes}

    def key(self, c, b) -> tuple[tuple[int, ...], int]:
        """Frame key of any full-coordinate inequality c·p <= b (valid on this set's affine hull)."""
        return self.frame.reduce(c, b)

    def facet_of(self, ineq: Inequality) -> Facet | None:
        """The facet equal to *ineq* on this set's affine hull, if any."""
        return self._index().get(self.key(ineq.vector(), ineq.bound))

    def _index(self) -> dict:
        idx = getattr(self, "_idx", None)
        if idx is None:
            idx = {(f.a, f.b): f for f in self.facets}
            self._idx = idx
        return idx

    def vertex_text(self, i: int) -> str:
        """A vertex in the frame's coordinates."""
        ys = self.frame.coords_of(self.vertices[i])
        return ", ".join(f"{f.text}={q(y)}" for f, y in zip(self.frame.functionals, ys) if y)

    def summary(self) -> str:
        total = sum(c.size for c in self.classes) if self.classes else len(self.facets)
        lines = [f"bundle {self.bundle}: {total:,} facets in {len(self.classes)} classes, "
                 f"{len(self.vertices)} vertices, dimension {self.dim} ({self.frame.kind} coordinates)"
                 + (" [PARTIAL]" if self.status != "complete" else "")]
        for c in self.classes:
            rep = self.facets[c.representative]
            known = f"  ({c.known_as})" if c.known_as else ""
            lines.append(f"  {c.name:>10}  {c.size:>6}  {rep.text}{known}")
        return "\n".join(lines)
