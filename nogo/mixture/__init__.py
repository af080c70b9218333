"""Hidden-variable bundles compiled to a mixture model (DESIGN.md §3, backend 2).

Outcome independence, predetermination and per-λ constraints are not linear
in the observed joint distribution; a finite hidden variable λ of *unfixed*
size is handled by convexity instead: the set of behaviours is the convex
hull of the behaviours of the *extreme responses*, and an LP over mixture
weights decides any linear question about it exactly.

Semantics
---------
*Present events* are those of the linear model (:func:`nogo.compile.present_events`):
every party's outcome, inner observers declared absolute, latent
counterfactual outcomes ``A@x`` under joint existence.  A *response* (the
behaviour for one value of λ) is a conditional distribution r(e | s) over the
present events e for every settings tuple s.  Read-out rules (an absolute
inner observer is shown by its lab's outcome at the read-out setting; ``A@x``
is A's outcome at setting x) hold in **every** response, so they hold in the
mixture.

Clauses, by kind:

* ``hidden: lam`` declares λ.  A clause that mentions λ (``given: [lam]`` or
  setting independence of λ) declares it too: a hidden variable alone
  constrains nothing.  One hidden variable per bundle.
* ``independent: {events: E, of: S, given: [lam]}`` — in each response the
  marginal of E does not depend on the settings S (parameter independence,
  local agency given λ, ...).  Absent events drop out (rule of projection).
* ``factorise: {groups: [G1, G2, ...], given: [lam]}`` — each response is a
  product r = Π_g r_g(e_g | s) over the groups (outcome independence).  After
  projection every present event must lie in exactly one group; several
  factorise clauses combine to the common refinement of their partitions
  (if r factorises over two partitions it factorises over their meet).  An
  event tied by a read-out rule to a party outcome must share its group.
* ``predetermined: {events: E, given: [lam], depends_on: D}`` — in each
  response every event of E is deterministic, and depends only on the
  settings of D (all settings when D is omitted).
* ``independent: {events: [lam], of: S}`` — setting independence of λ: the
  weights of λ do not depend on the settings S.  With ``events: [lam, E...]``
  the pair (λ, E) is independent of S, i.e. λ is and E is given λ.
* every clause without λ (absoluteness, counterfactual, independence on the
  observed or absolute events) holds on the *mixture*: an independence
  clause equates marginals of the mixture's full joint of present events,
  a linear row in the weights.

Per-λ clauses split per group: for a product of distributions the joint
marginal of a union of events is setting-independent exactly when each
factor's marginal is.  So each group has a *response polytope* P_g (its
cells r_g(e_g | s) >= 0, normalised per s, read-out rules, the independence
clauses restricted to its events); predetermination keeps the vertices of
P_g at which the predetermined events are deterministic (they are the
vertices of the union of faces where those events are deterministic).  The
extreme responses are products of group vertices (the product is
multilinear), and the model's columns are weights of

    (one vertex per group, weight class)

where a weight class is a value of the settings that λ may depend on (one
class when λ is setting-independent: weights shared by all settings tuples).
A column's observed behaviour is its response at the settings of its class;
rows are the normalisation of weights per class plus the rows of the
mixture-level clauses.  With parameter and outcome independence every group
vertex is deterministic: Fine's theorem (A. Fine, PRL 48, 291 (1982)).

Group vertices are enumerated exactly: deterministic responses directly (a
group whose events are all predetermined, or a group of one event, whose
polytope is a product of simplices), any other polytope by double
description in rational arithmetic (pycddlib, ``number_type='fraction'``;
K. Fukuda and A. Prodon, "Double description method revisited", LNCS 1120
(1996)).  The size of the model is computed before any column is built and
refused above ``max_columns`` with the assumption that makes it big.

Two shortcuts give the same set with less work, and say so in the notes:
a bundle with no clause given λ compiles to the plain linear model (λ adds
nothing: the joint itself is a one-valued mixture); and one group without
predetermination, with λ setting-independent, is a convex set of responses,
so when its vertices are too many to list the per-λ clauses are put on the
joint instead (same set, linear model).  When λ may depend on some settings
the columns are the responses that differ at the settings of each weight
class (identical ones are merged; for groups whose events may depend on
every setting the responses are listed per class directly).

What this route cannot do: a factorisation that leaves present events in no
group (the product form then holds only for a marginal, which is neither a
product nor convex); two hidden variables; setting independence given λ of
λ itself.  Those raise :class:`~nogo.errors.InputError` naming the
assumption.
Stages, one module each, imported in one direction:

* :mod:`.bundle` — the clauses about λ and the groups of the factorisation;
* :mod:`.guard` — sizes from the declaration, refusals, the convex shortcut's decision;
* :mod:`.responses` — the extreme responses of one group, listed exactly;
* :mod:`.columns` — the mixture model (convex hull of the responses' behaviours) and the full joint;
* :mod:`.equivalent` — bundles whose set is that of a linear model, compiled as it;
* :mod:`.compile` — :func:`compile_mixture`, the stages in order.
"""

from .bundle import GroupConstraint, GroupSpec, Settings
from .columns import mixture_joint
from .compile import compile_mixture
from .responses import GroupVertices, deterministic_count_bound, describe_group_response, group_vertices

__all__ = ["GroupConstraint", "GroupSpec", "GroupVertices", "Settings", "compile_mixture",
           "describe_group_response", "deterministic_count_bound", "group_vertices", "mixture_joint"]
