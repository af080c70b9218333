"""Possibilistic reading of hidden-variable bundles (sets of possible responses).

Check values: Hardy, PRL 71, 1665 (1993) (the Hardy pattern has no local
hidden-variable model); Popescu & Rohrlich, Found. Phys. 24, 379 (1994) (the
PR box is no-signalling, hence a single response under parameter
independence given λ, and is not local); Fine, PRL 48, 291 (1982) (local
causality given λ and joint counterfactual outcomes give the same set, so the
two possibilistic readings must agree).
"""

from dataclasses import replace
from pathlib import Path

import pytest

from nogo.possibilistic import decide_pattern, load_pattern
from nogo.possibilistic.responses import check_response_proof, decide_responses, response_proof_markdown

ROOT = Path(__file__).resolve().parent.parent


def pattern(theory, name):
    return load_pattern(ROOT / "examples" / "patterns" / f"{name}.yaml", theory.scenario)


@pytest.mark.parametrize("name", ["hardy", "pr-box"])
def test_local_causality_contradicts_hardy_and_pr_box(theory, name):
    # Hardy (1993); Popescu & Rohrlich (1994): neither pattern has a local model.
    th = theory("hidden-2x2")
    r = decide_responses(th, "local-causality", pattern(th, name))
    assert r.contradiction
    assert check_response_proof(th, "local-causality", pattern(th, name), r) is None
    text = response_proof_markdown(r, "theories/hidden-2x2.yaml")
    assert "Contradiction" in text and "lam-response" in text


@pytest.mark.parametrize("name", ["hardy", "pr-box"])
def test_parameter_independence_alone_allows_both(theory, name):
    # Popescu & Rohrlich (1994): no-signalling responses include the PR box;
    # Hardy's pattern is no-signalling-compatible (Hardy 1993).
    th = theory("hidden-2x2")
    r = decide_responses(th, "param-indep-only", pattern(th, name))
    assert not r.contradiction and r.model
    assert check_response_proof(th, "param-indep-only", pattern(th, name), r) is None


@pytest.mark.parametrize("name", ["hardy", "pr-box"])
def test_agrees_with_the_joint_support_reading_by_fines_theorem(theory, name):
    # Fine (1982): both declarations of the Bell-local set give the same verdict.
    hidden, linear = theory("hidden-2x2"), theory("bell-2x2")
    a = decide_responses(hidden, "local-causality", pattern(hidden, name))
    b = decide_pattern(linear, "Bell-local", pattern(linear, name), minimise="minimal")
    assert a.contradiction == b.contradiction


def test_checker_rejects_an_altered_proof(theory):
    th = theory("hidden-2x2")
    p = pattern(th, "hardy")
    r = decide_responses(th, "local-causality", p)
    dropped = replace(r, exclusions=r.exclusions[1:])
    assert check_response_proof(th, "local-causality", p, dropped) is not None
    x = r.exclusions[0]
    wrong = replace(x, settings=r.event[0], outcomes=r.event[1])  # the possible event is not impossible
    assert check_response_proof(th, "local-causality", p, replace(r, exclusions=[wrong] + r.exclusions[1:])) is not None
    forged = replace(r, contradiction=False, model=[x.response])
    assert check_response_proof(th, "local-causality", p, forged) is not None


def test_a_clause_on_the_mixture_is_refused_clearly(theory):
    # no-signalling stated on the observed joint (not given λ) constrains the
    # mixture itself; its support reading is not the union of supports
    from nogo.errors import InputError

    th = theory("hidden-2x2")
    with pytest.raises(InputError, match="pure mixture"):
        decide_responses(th, "hidden+lam-free+outcome-indep+no-signal-A", pattern(th, "hardy"))
