"""Facets of a bundle's set: symmetry classes, names, comparisons, exports, cache.

``facets(theory, bundle)`` derives the exact polytope of the behaviours the
bundle allows (:func:`nogo.polytope.derive_polytope`), then

* finds which relabellings of the scenario (outcomes per party and setting,
  settings that play the same role, parties that play the same role;
  :func:`nogo.symmetry.bundle_generators`) are symmetries of this set: a
  move is kept only when it maps the vertex set onto itself, an exact check;
* splits the facets into classes under the group these moves generate, with
  a canonical representative per class (fewest terms, then smallest bound);
* names the classes: catalog entries (positivity, CHSH, I3322, ...) are
  recognised when one of their versions is a facet; the others get stable
  numbered names ``F<n>`` from the order of their representatives;
* keeps the result in the store, keyed by a hash of the compiled model (which
  is a function of the declarations), the coordinates and the group, and on a
  later run re-verifies it with exact checks before calling it exact
  (:mod:`nogo.facetstore`; names are recomputed, never read from the store).

Stages, one module each: the data types (:mod:`nogo.facettypes`); classes,
names and the result (:mod:`nogo.facetclasses`); the store
(:mod:`nogo.facetstore`); comparisons (:mod:`nogo.facetcompare`); exports
(JSON, YAML, CSV, LaTeX; :mod:`nogo.facetexport`).  This module runs them
(:func:`facets`, :func:`compare`); the stage modules' names stay importable
from here.

``compare(theory, b1, b2)`` sets two bundles of one scenario side by side:
equal, one inside the other, or neither, with exact witnesses, and the facets
that are new to the larger set.

Facet classification by symmetry follows the practice of e.g. D. Collins and
N. Gisin, J. Phys. A 37, 1775 (2004) and C. Śliwa, Phys. Lett. A 317, 165
(2003) (classes under relabelling of parties, settings and outcomes).
"""

from __future__ import annotations

import time
from pathlib import Path

from . import facetstore
from .compile import compile_bundle
from .facetclasses import _build, _catalog_names, _raw_orbit, _reduce_versions, classify  # noqa: F401
from .facetcompare import Comparison, Witness, compare_results  # noqa: F401
from .facetstore import cache_dir  # noqa: F401 - importable from here as before
from .facettypes import Facet, FacetClass, FacetResult  # noqa: F401
from .inequality import Inequality
from .polytope import Progress, derive_polytope, derive_symmetric
from .symmetry import bundle_generators
from .theory import Theory


def facets(theory: Theory, bundle, *, frame: str = "auto", cache: bool | str | Path = True,
           time_limit: float | None = None, workers: int | None = None, progress: Progress | None = None,
           seed: int = 1, max_columns: int = 200_000, route: str = "auto", explore: bool = False,
           start=()) -> FacetResult:
    """Every facet of the set of behaviours that *bundle* allows, in classes.

    Parameters
    ----------
    theory : a loaded theory (:func:`nogo.theory.load_theory`).
    bundle : bundle name or assumption names (as for :meth:`Theory.resolve`).
    frame : "auto", "collins-gisin", "correlators" or "probabilities".
    cache : True (``$NOGO_CACHE`` or ``./.nogo-cache``), a folder, or False.
    time_limit : seconds; a result that ran out is marked ``status == "partial"``.
    workers : processes for the oracle (through :func:`nogo.fanout.fan_out`).
    progress : callback ``(stage, done, total)``.
    route : "auto" (facets up to symmetry when some relabelling is a verified symmetry of the
        model, :func:`nogo.polytope.derive_symmetric`; else the plain hull), "plain" or "symmetric".
    explore : classes by faces, large faces sampled by rays and the list then proven complete by
        closure where the proof goes through, else marked ``"partial"`` (symmetric route).
    start : inequalities (catalog names, text or :class:`nogo.inequality.Inequality`) that the
        faces route begins from; those that are not facets of the set are left out with a note.

    Returns
    -------
    :class:`FacetResult` with ``.facets`` (each with ``.inequality``,
    ``.class_name``, ``.vertices``), ``.classes`` and ``.vertices``.

    Example
    -------
    >>> from nogo.theory import load_theory
    >>> r = facets(load_theory("theories/bell-2x2.yaml"), "Bell-local", cache=False)
    >>> len(r.facets), sorted((c.name, c.size) for c in r.classes)
    (24, [('CHSH', 8), ('positivity', 16)])
    """
    t0 = time.perf_counter()
    starts = [_start_form(theory, x) for x in start]
    model = compile_bundle(theory, bundle, max_columns=max_columns)
    gens = bundle_generators(theory, bundle)
    theory_file = str(theory.file or "")
    store = key = None
    warnings: list[str] = []
    if cache:
        store = facetstore.open_store(cache)
        key = facetstore.cache_key(model, frame, gens, route)
        t1 = time.perf_counter()
        P, why = facetstore.load(store, key, model, gens)
        warnings += store.warnings
        if P is not None:
            r = _build(theory_file, P, gens, time.perf_counter() - t1)
            r.from_cache, r.reverified, r.cache_file = True, True, str(store.path)
            r.warnings = warnings
            r.seconds = time.perf_counter() - t0
            return r
        if why:
            warnings.append(f"warning: the stored result failed re-verification ({why}); derived afresh")
    if route == "plain":
        P = derive_polytope(model, frame, moves=[g.move for g in gens], seed=seed, time_limit=time_limit,
                            workers=workers, progress=progress)
    else:
        faces = explore or bool(starts)
        pieces = facetstore.run_pieces(store, key) if store is not None and not faces else None
        P = derive_symmetric(model, frame, generators=gens, seed=seed, time_limit=time_limit, workers=workers,
                             progress=progress, store=pieces, force=(route == "symmetric"), explore=explore,
                             start=starts)
    if progress:
        progress("classes", 0, None)
    r = _build(theory_file, P, gens, 0.0)
    if store is not None and facetstore.keep(store, key, P, model):
        r.cache_file = str(store.path)
    if store is not None:
        warnings += [w for w in store.warnings if w not in warnings]
    r.seconds = time.perf_counter() - t0
    r.warnings = warnings
    return r


def _start_form(theory: Theory, spec) -> tuple[tuple[int, ...], int]:
    """A start inequality as integers over the scenario's coordinates (the ``<=`` form)."""
    from .catalog import resolve_inequality

    ineq = spec if isinstance(spec, Inequality) else resolve_inequality(theory.scenario, spec)
    return ineq.canonical()


def compare(theory: Theory, b1, b2, **options) -> Comparison:
    """Compare the sets of two bundles of one scenario, exactly.

    Both sets are derived with :func:`facets` (``options`` are passed on).
    A vertex of one set that breaks an equation or a facet of the other is a
    witness that the first is not inside the second; a set is inside another
    exactly when all its vertices satisfy all of the other's equations and
    facets.  When both span the same affine space, the facets of each are
    matched on that space and the facets of one that are not facets of the
    other are listed.

    Example
    -------
    >>> from nogo.theory import load_theory
    >>> c = compare(load_theory("theories/friends-2x2.yaml"), "local-friendliness", "Bell-local", cache=False)
    >>> c.relation
    'equal'
    """
    r1 = facets(theory, b1, **options)
    r2 = facets(theory, b2, **options)
    return compare_results(r1, r2)
