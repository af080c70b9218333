"""Two facet results of one scenario side by side: equal, one inside the other, or neither.

A set is inside another exactly when all its vertices satisfy all of the
other's equations and facets (exact integer arithmetic); a vertex of one
set that breaks an equation or a facet of the other is the witness that it
is not (:func:`_outside`).  When both span the same affine space the facets
of each are matched on that space, and the facets of one that are not
facets of the other are listed (:func:`compare_results`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction

from .facettypes import Facet, FacetResult
from .polytope import Point, _coords_matrix, int_matmul


@dataclass
class Witness:
    """A vertex of one set outside the other: the facet (or equation) it breaks, by how much."""

    vertex: int  # index into the owning result's vertices
    behaviour: Point
    breaks: str  # the facet's or equation's text
    facet: int | None  # facet index in the other result, None for an equation
    value: Fraction
    bound: Fraction


@dataclass
class Comparison:
    first: FacetResult
    second: FacetResult
    relation: str  # "equal" | "first inside second" | "second inside first" | "neither"
    first_outside: list[Witness]  # vertices of the first set outside the second
    second_outside: list[Witness]
    violated_facets_of_first: dict[int, int]  # facet of first -> a vertex of second that violates it
    violated_facets_of_second: dict[int, int]
    same_hull: bool  # both sets span the same affine space
    first_only_facets: list[int] = field(default_factory=list)  # facets of first that are not facets of second
    second_only_facets: list[int] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)

    @property
    def larger(self) -> FacetResult | None:
        return {"first inside second": self.second, "second inside first": self.first}.get(self.relation)

    def new_facets(self) -> list[Facet]:
        """Facets of the larger set that are not facets of the smaller one."""
        if self.relation == "first inside second":
            return [self.second.facets[i] for i in self.second_only_facets]
        if self.relation == "second inside first":
            return [self.first.facets[i] for i in self.first_only_facets]
        return []

    def summary(self) -> str:
        a, b = self.first.bundle, self.second.bundle
        rel = {"equal": f"{a} = {b}", "first inside second": f"{a} ⊂ {b} (strictly)",
               "second inside first": f"{b} ⊂ {a} (strictly)", "neither": f"neither of {a}, {b} contains the other"}
        lines = [rel[self.relation]]
        for res, other, idx, vf in ((self.first, self.second, self.first_only_facets, self.violated_facets_of_first),
                                    (self.second, self.first, self.second_only_facets,
                                     self.violated_facets_of_second)):
            if vf:
                lines.append(f"facets of {res.bundle} that {other.bundle} violates: {len(vf)} "
                             f"({_count_by_class(res, vf)})")
            if idx and self.same_hull:
                lines.append(f"facets of {res.bundle} that are not facets of {other.bundle}: {len(idx)} "
                             f"({_count_by_class(res, idx)})")
        return "\n".join(lines + self.notes)


def _count_by_class(res: FacetResult, idx) -> str:
    counts: dict[str, int] = {}
    for i in idx:
        counts[res.facets[i].class_name] = counts.get(res.facets[i].class_name, 0) + 1
    return ", ".join(f"{n} {c}" for c, n in sorted(counts.items(), key=lambda kv: (-kv[1], kv[0])))


def _outside(A: FacetResult, B: FacetResult) -> tuple[list[Witness], dict[int, int]]:
    """Vertices of A outside B (exact), and facets of B violated by some vertex of A."""
    wits: list[Witness] = []
    violated: dict[int, int] = {}
    bad_eq: set[int] = set()
    for j, v in enumerate(A.vertices):
        for h, val in B.polytope.equations:
            got = sum((Fraction(x) * y for x, y in zip(h, v) if x), Fraction(0))
            if got != val:
                bad_eq.add(j)
                text = " + ".join(f"{x} p{c}" for x, c in zip(h, B.scenario.coordinates()) if x)
                wits.append(Witness(j, v, f"{text} = {val}", None, got, val))
                break
    if not B.facets:
        return wits, violated
    Y, den = _coords_matrix(B.frame, A.vertices)
    vals = int_matmul([f.a for f in B.facets], Y, B.dim)
    first_break: dict[int, int] = {}
    for i, f in enumerate(B.facets):
        lim = f.b * den
        for j, v in enumerate(vals[i]):
            if j in bad_eq:
                continue
            if v > lim:
                violated.setdefault(i, j)
                first_break.setdefault(j, i)
    for j, i in sorted(first_break.items()):
        f = B.facets[i]
        wits.append(Witness(j, A.vertices[j], B.frame.text(f.a, f.b, flip=False), i,
                            Fraction(int(vals[i][j]), den), Fraction(f.b)))
    # a vertex on B's affine hull but violating B's facet: the value in B's frame is only meaningful there
    return wits, violated


def compare_results(r1: FacetResult, r2: FacetResult) -> Comparison:
    if r1.scenario.coordinates() != r2.scenario.coordinates():
        from .errors import InputError

        raise InputError("the two bundles speak of different scenarios")
    notes = []
    if r1.status != "complete" or r2.status != "complete":
        notes.append("at least one description is partial: the comparison covers what was derived")
    out1, viol2 = _outside(r1, r2)  # vertices of 1 outside 2; facets of 2 violated by 1
    out2, viol1 = _outside(r2, r1)
    in12, in21 = not out1, not out2
    relation = ("equal" if in12 and in21 else "first inside second" if in12 else
                "second inside first" if in21 else "neither")
    same = r1.dim == r2.dim and not any(w.facet is None for w in out1 + out2)
    if same and relation == "neither":
        # same dimension but possibly different affine hulls: check the equations both ways
        same = all(_on(r2, v) for v in r1.vertices) and all(_on(r1, v) for v in r2.vertices)
    only1, only2 = [], []
    if same:
        in1 = r1.frame.reduce_many([f.inequality.vector() for f in r2.facets], [f.b for f in r2.facets])
        keys2 = set(in1)
        keys1 = {(f.a, f.b) for f in r1.facets}
        only1 = [f.index for f in r1.facets if (f.a, f.b) not in keys2]
        only2 = [f.index for f, key in zip(r2.facets, in1) if key not in keys1]
    else:
        notes.append("the two sets span different affine spaces: facets are not matched one to one")
    return Comparison(r1, r2, relation, out1, out2, viol1, viol2, same, only1, only2, notes)


def _on(r: FacetResult, v: Point) -> bool:
    return all(sum((Fraction(x) * y for x, y in zip(h, v) if x), Fraction(0)) == val for h, val in r.polytope.equations)
