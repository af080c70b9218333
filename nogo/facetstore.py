"""The facet results' store path: where results are kept, their keys, loading with re-verification, keeping.

A finished derivation is kept in the sqlite3 store (:mod:`nogo.store`)
under a key that hashes the compiled model's fingerprint, the coordinates,
the route and the relabellings offered; the entry carries the evidence that
makes it cheap to re-verify (vertex preimages, Farkas multipliers of the
equations and of every class representative; :func:`nogo.polytope.certify.to_payload`).
On load the entry's content hash and model fingerprint are compared and the
polytope is re-verified with every exact check of a fresh run
(:func:`nogo.polytope.certify.reverify`) before it is called exact; anything
that fails is reported in one line and the caller derives afresh.  A store
that cannot be read or written gives a warning; the result is still shown.

Stage order: :func:`nogo.facets.facets` compiles the model, asks
:func:`load` here, derives when that fails, and hands the polytope to
:func:`keep`; class names are recomputed from the catalog every time
(:func:`nogo.facetclasses._build`), so a stored entry cannot carry a wrong name.
"""

from __future__ import annotations

import hashlib
import os
from pathlib import Path

from .polytope import Polytope, fingerprint

CACHE_VERSION = "nogo-facets-2"


def cache_dir() -> Path:
    return Path(os.environ.get("NOGO_CACHE") or Path.cwd() / ".nogo-cache")


def open_store(cache):
    """The store for the ``cache`` option (True: ``$NOGO_CACHE`` or ``./.nogo-cache``; a folder or file)."""
    from .store import Store

    return Store(cache_dir() if cache is True else Path(cache))


def cache_key(model, frame: str, gens, route: str) -> str:
    h = hashlib.sha256()
    for part in (CACHE_VERSION, fingerprint(model), frame, route, "|".join(g.label for g in gens)):
        h.update(part.encode())
        h.update(b"\0")
    return h.hexdigest()[:24]


def load(store, key: str, model, gens) -> tuple[Polytope | None, str]:
    """The stored polytope under *key*, re-verified; (None, reason) when it fails, (None, "") when absent."""
    from .polytope.certify import reverify

    entry = store.get(key)
    if entry is None:
        return None, ""
    if not entry["hash_ok"]:
        return None, "its content hash does not match"
    if entry["fingerprint"] != fingerprint(model):
        return None, "it was derived from another model"
    return reverify(entry["payload"], model, gens)


def keep(store, key: str, P: Polytope, model) -> bool:
    """Write a complete polytope with its evidence; False (a warning kept on the store) when it cannot be."""
    from .polytope.certify import to_payload

    if P.status != "complete":
        return False
    ok = store.put(key, P.fingerprint, "facets", to_payload(P, model))
    store.drop_run(key)  # the pieces of the run are no longer needed
    return ok


def run_pieces(store, key: str):
    """Where a symmetric run keeps its closed classes for resuming (:class:`nogo.store.RunPieces`)."""
    from .store import RunPieces

    return RunPieces(store, key)
