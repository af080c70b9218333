"""Smallest sets of facts by implicit hitting sets, one witness at a time.

A minimal possibilistic proof ends at one possible event (its *witness*) or
at normalisation, and uses a set of impossible events (the formula is dual
Horn: Dowling & Gallier, J. Logic Programming 1, 267 (1984)).  For a fixed
witness the smallest set is found by the implicit hitting-set method
(A. Ignatiev, A. Previti, M. Liffiton, J. Marques-Silva, "Smallest MUS
extraction with minimal hitting set dualization", CP 2015): a minimum hitting
set (pysat's Hitman over RC2 MaxSAT) of the correction sets found so far is
tested; a model of it yields a new correction set (the impossible events the
model shows), together with its images under the symmetries that fix the
witness.  The size of the last minimum hitting set is a lower bound.
"""

from __future__ import annotations

import time
from typing import Callable, Iterable

from pysat.examples.hitman import Hitman

NO_PROOF = 10 ** 9


def smallest_for_witness(relevant: list[int], test: Callable[[list[int]], Iterable[list[int]] | None],
                         best_size: int, deadline: float | None, n_iter: list[int]):
    """Smallest subset of *relevant* that *test* finds unsatisfiable, if smaller than *best_size*.

    test(hs) returns None when hs (with the witness and the hard clauses) is
    unsatisfiable, else correction sets (lists of impossible-event indices;
    an empty one means no proof ends at this witness).

    Returns (facts or None, lower bound, finished).
    """
    pos = {k: j + 1 for j, k in enumerate(relevant)}
    back = {j: k for k, j in pos.items()}
    lower = 0
    with Hitman(htype="sorted") as hm:
        while True:
            if deadline is not None and time.monotonic() > deadline:
                return None, lower, False
            n_iter[0] += 1
            hs = hm.get()
            hs = [] if hs is None else sorted(back[j] for j in hs)
            lower = max(lower, len(hs))
            if len(hs) >= best_size:
                return None, lower, True
            sets = test(hs)
            if sets is None:
                return hs, len(hs), True
            for cs in sets:
                cs = [pos[k] for k in cs if k in pos]
                if not cs:
                    return None, NO_PROOF, True
                hm.hit(cs)
