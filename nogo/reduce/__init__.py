"""Reductions between the compiled model and the solver.

Each step takes a :class:`~nogo.model.LinearModel` and returns a smaller
equivalent one together with the maps that carry a solution and a
certificate back: a point of the reduced model lifts to a point of the
model before the step, and dual multipliers of the reduced model lift to
multipliers of the rows before the step (a Farkas certificate of the same
bound).  Lifted evidence is always checked again, exactly, against the
original model (:func:`nogo.check.decide`), so a wrong step cannot pass
unseen: the decision then falls back to the unreduced model.

Steps (applied until nothing changes):

* **merge** — a row ``q_j − q_k = 0`` (two entries of opposite sign and
  equal size, right side 0) says two columns are equal.  Independence
  clauses write exactly such rows when, at each settings tuple, the clause's
  events determine every other present event (counterfactual bundles under
  setting independence: one column per latent assignment at each settings
  tuple, so the 36 copies of the latent joint of Bell 2×6 merge into one
  distribution over the 4,096 deterministic strategies).  The connected
  components of these rows become one column each; rows that become equal
  are kept once, rows that become 0 = 0 are dropped.  Lifting the point
  copies the class value to every member; lifting the duals puts the
  merged rows' multipliers on a spanning forest of each class, peeled from
  the leaves so that every member column keeps a reduced cost of zero and
  the class's whole reduced cost (non-negative when the reduced duals are
  feasible) sits on its root.
  The compiler's rows (:class:`nogo.linear.CompiledRows`) name their
  equality rows from their structure, so this step never builds the
  compiled matrix; the evidence is then checked on the compiled rows'
  own products A·x and Aᵀ·y.
* **zero** — a row with right side 0 whose entries all have one sign
  forces every column in it to 0; those columns and the row are removed.
  Lifting the duals gives the row a multiplier large enough to make the
  removed columns' reduced costs non-negative.
* **fixed** — a row with one entry and a non-zero right side fixes its
  column to a value (when that value is negative the model is empty, and
  the step leaves it for the solver to report); the column leaves and the
  other rows' right sides move by its contribution.  Lifting the point
  puts the value back; lifting the duals gives the fixing row the
  multiplier that makes the column's reduced cost exactly 0.
* **same** — columns equal in every row and in the observation map (so in
  every objective nogo builds) are one column; the point puts the class's
  weight on its first member, the multipliers are unchanged.  (Friends
  models: the counterfactual outcomes that no row mentions multiply the
  columns; 1,600 become 100.)

Layout: :mod:`.base` (the step interface, views, exact row comparison),
:mod:`.merge`, :mod:`.steps` (zero, fixed, same); this module holds the
chain.  To add a step: a function ``model -> Step | None`` with exact
lifts, listed in ``STEPS``.

This is the pattern of presolve in LP codes (e.g. E. D. Andersen and K. D.
Andersen, "Presolving in linear programming", Math. Prog. 71, 221–245
(1995)), restricted to steps whose dual maps are exact and simple.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from ..intarith import ExactVector
from ..model import LinearModel
from .base import MergedColumns, Step, Subset, reduced_cost_numerators
from .merge import MergeStep, _merge, spanning_forest
from .steps import FixedStep, SameStep, ZeroStep, _fixed, _same, _zero

__all__ = ["STEPS", "FixedStep", "MergeStep", "MergedColumns", "Reduced", "SameStep", "Step", "Subset", "ZeroStep",
           "reduce_model", "reduced_cost_numerators", "spanning_forest"]


STEPS = (_merge, _zero, _fixed, _same)


# -- the chain -------------------------------------------------------------------
@dataclass
class Reduced:
    """The original model, the reduced one and the steps between them."""

    original: LinearModel
    model: LinearModel
    steps: list[Step] = field(default_factory=list)

    def lift_point(self, x: ExactVector) -> ExactVector:
        for st in reversed(self.steps):
            x = st.lift_point(x)
        return x

    def reduce_cost(self, cost: ExactVector) -> ExactVector:
        costs = [cost]
        for st in self.steps:
            costs.append(st.reduce_cost(costs[-1]))
        return costs[-1]

    def lift_duals(self, y: ExactVector, cost: ExactVector) -> ExactVector:
        costs = [cost]
        for st in self.steps[:-1]:
            costs.append(st.reduce_cost(costs[-1]))
        for st, c in zip(reversed(self.steps), reversed(costs)):
            y = st.lift_duals(y, c).normalised()
        return y

    def summary(self) -> list[str]:
        return [st.summary for st in self.steps]


def reduce_model(model: LinearModel, steps=STEPS, max_rounds: int = 8) -> Reduced:
    """Apply the steps until none changes the model (cached on the model)."""
    if steps is STEPS:
        got = model.extra.get("_reduced")
        if got is not None:
            return got
    chain: list[Step] = []
    cur = model
    idle: dict = {}  # step -> the model it last found nothing to do on (not asked again about the same model)
    for _ in range(max_rounds):
        changed = False
        for f in steps:
            if idle.get(f) is cur:
                continue
            st = f(cur)
            if st is not None:
                chain.append(st)
                cur = st.after
                changed = True
            else:
                idle[f] = cur
        if not changed:
            break
    red = Reduced(model, cur, chain)
    if steps is STEPS:
        model.extra["_reduced"] = red
    return red
