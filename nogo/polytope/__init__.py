"""The exact polytope of behaviours a bundle allows, stage by stage.

* :mod:`.oracle` — the LP oracle of a compiled model, with exact certificates;
* :mod:`.frame` — affine coordinates of the set (Collins–Gisin, correlators, probabilities);
* :mod:`.hull` — exact convex hulls (cddlib, rationals), optionally in a subprocess with a time limit;
* :mod:`.derive` — the plain route: vertices by the oracle, one hull, every facet checked;
* :mod:`.group` — the symmetry group acting on the points, and on inequalities;
* :mod:`.adjacency` — facets up to symmetry by adjacency decomposition (Christof & Reinelt 2001;
  Bremner, Dutour Sikirić, Schürmann, arXiv:math/0702239);
* :mod:`.symmetric` — the symmetric route: verified model symmetries, classes, certificates per class;
* :mod:`.certify` — stored descriptions re-verified with the exact checks of a fresh derivation.
"""

from .derive import derive_polytope
from .frame import Frame, Functional, affine_basis, candidate_functionals, choose_frame, no_signalling_functionals
from .hull import _coords_matrix, _exact_hull, _hull_in, hull_estimate, int_matmul
from .ints import Point, PolytopeError, Progress, _lcm, _zmat, primitive
from .oracle import Answer, fingerprint, oracle_batch
from .result import HullFacet, Polytope
from .symmetric import derive_symmetric

__all__ = ["Answer", "Frame", "Functional", "HullFacet", "Point", "Polytope", "PolytopeError", "Progress",
           "affine_basis", "candidate_functionals", "choose_frame", "derive_polytope", "fingerprint",
           "hull_estimate", "int_matmul", "no_signalling_functionals", "oracle_batch", "primitive"]
