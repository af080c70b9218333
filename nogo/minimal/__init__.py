"""Minimal implicating sets: which assumptions an inequality really needs.

For a theory, a *pool* of its atomic assumptions and an inequality I, a set
S of pool members *implies* I when the bundle S (plus a fixed background,
below) implies I; the answer comes from the exact oracle
``nogo.check.decide(compile_bundle(theory, S), I)``.  Implication is
monotone: a superset of an implying set implies (its set of behaviours is
smaller), a subset of a non-implying set does not.  This module lists

* every **minimal implicating set** (implies I, no proper subset does), each
  with its own exact Farkas certificate, and
* every **maximal non-implying set** (does not imply I, adding any pool
  member makes it imply), each with its own exact counterexample: a
  behaviour the set allows and the value of I it reaches.

Method: MARCO (M. H. Liffiton, A. Previti, A. Malik, J. Marques-Silva, "Fast,
flexible MUS enumeration", Constraints 21(2):223–250 (2016)).  A SAT *map
solver* (python-sat) holds one boolean per pool member; its models are the
subsets not yet explained.  Each round takes a *maximal* model of the map
(a seed) and asks the oracle:

* seed does not imply I -> it is a maximal non-implying set (every proper
  superset of it is already known to imply); block it and all its subsets
  with the clause "some member outside the seed";
* seed implies I -> shrink it by deleting members one at a time while the
  rest still implies, to a minimal implicating set; block it and all its
  supersets with the clause "some member of it is missing".

The search ends when the map is unsatisfiable; by then every subset of the
pool lies above a listed minimal set or below a listed maximal one.  Every
oracle answer is kept, and before each call the known answers are consulted
through monotonicity, so no subset is ever decided twice; the report counts
oracle calls against the 2**n of brute force.  Shrinking is sped up by the
Farkas certificate: members that only add rows (plain independence
constraints) and whose rows carry no weight in the certificate are dropped
in one step, which is then confirmed by the oracle like any other step (a
hint that saves calls, never a shortcut to a verdict).

Choices (and why):

* **Background.**  Assumptions that only *declare* a hidden variable
  (``hidden: lam``) constrain nothing on their own; they are the language in
  which other assumptions speak.  They are never pool members: each one
  that a pool or fixed assumption mentions (through ``given``) is added to
  every bundle, and the report lists it as background.  The caller may fix
  further assumptions (``fixed``) that stay in every bundle.
* **Inequalities written with marginals** (I3322 in Collins–Gisin form) have
  no single meaning under a bundle that lets the marginal depend on the
  other parties' settings; the oracle refuses them (``decide`` raises
  InputError).  Here such a subset gets the status ``"refused"`` and counts
  on the *not implying* side: refusal means the subset does not imply
  no-signalling for that marginal, which is inherited by every subset, so
  the implying family stays upward-closed and the search stays exact.  A
  maximal set that is refused is reported as such, with the reason, never
  as a counterexample.  Write the inequality with correlators or joint
  probabilities to get counterexamples for every maximal set.
* **Contradictory bundles** (no behaviour at all) imply everything
  vacuously; they get the status ``"contradictory"`` on the implying side,
  without a certificate, and the report says so.

Example::

    >>> from nogo.theory import load_theory
    >>> from nogo.catalog import resolve_inequality
    >>> th = load_theory("theories/friends-2x2.yaml")
    >>> res = find_minimal_sets(th, resolve_inequality(th.scenario, "CHSH"),
    ...                         ["absoluteness", "agency-A", "agency-B", "agency-inner"])
    >>> [sorted(a.subset) for a in res.minimal]
    [['absoluteness', 'agency-A', 'agency-B']]

Every oracle call is the pure function :func:`ask` of picklable inputs; many
inequalities fan out through :func:`nogo.fanout.fan_out`.

The stages live in their own modules, imported in one direction:
:mod:`.pool` (pool and background) -> :mod:`.oracle` (one answer, the
guard memory) -> :mod:`.search` (MARCO; one search per inequality) ->
:mod:`.claims` (summaries, claims a referee checks).  This package
re-exports their names.
"""

from __future__ import annotations

from .claims import ClaimResult, Summary, check_claim, summarise
from .oracle import IMPLYING, STATUSES, Answer, GuardMemory, ask
from .pool import split_pool
from .search import SearchResult, explored_fraction, find_for_many, find_minimal_sets

__all__ = ["IMPLYING", "STATUSES", "Answer", "ClaimResult", "GuardMemory", "SearchResult", "Summary", "ask",
           "check_claim", "explored_fraction", "find_for_many", "find_minimal_sets", "split_pool", "summarise"]
