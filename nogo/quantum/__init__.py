"""The quantum side: experiments, Born-rule behaviours, inner observers,
noise robustness, optimised settings and NPA upper bounds.

Public API (stable for other parts of nogo)::

    from nogo.quantum import load_experiment, behaviour, exact_behaviour
    exp = load_experiment("examples/experiments/ghz-three-labs.yaml")
    p = behaviour(exp)            # {(settings tuple, outcomes tuple): float}
    q = exact_behaviour(exp)      # same keys, sympy values (exact inputs only)
    support = {k for k, v in q.items() if v != 0}

Layout: numbers (exact parsing, balls), states, measurements, experiment
(declarations, effective measurements), born (numeric / exact / ball Born
rule), labs (what yields a lab's outcome: read-out chains, undoing,
observers' own choices; the Bell scenario of the readings), inner and
registers (explicit register models, one observer level and nested),
certify (values and verdicts with
evidence), visibility (critical visibility LP and its dual inequality),
optimise (settings for the largest violation), npa (upper bounds).
"""

from .born import ball_behaviour, behaviour, exact_behaviour
from .experiment import Experiment, load_experiment, load_experiment_text
from .inner import explicit_behaviour
from .measurements import Measurement
from .states import State

__all__ = ["Experiment", "Measurement", "State", "ball_behaviour", "behaviour", "exact_behaviour",
           "explicit_behaviour", "load_experiment", "load_experiment_text"]
