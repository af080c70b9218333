"""The mixture route is sized from the declaration before it lists any response or cell.

The convex shortcut (one group, no predetermination, λ free of every setting: the responses
form one polytope, so the mixture set is that polytope and the per-λ clauses can be put on
the joint) used to list the responses first and only then fall back, unguarded, to the
linear model.  Now the decision and the linear model's size come from the declaration, and
a refusal names the size, the assumption responsible and the option that raises the limit.
Check values: CHSH's no-signalling maximum 4 (S. Popescu and D. Rohrlich, Found. Phys. 24,
379 (1994)); the rest are counts computed from the declaration against the cells listed.
"""

from __future__ import annotations

import time

import pytest

from nogo.catalog import resolve_inequality
from nogo.check import decide, recheck
from nogo.compile import compile_bundle
from nogo.errors import ModelTooLarge
from nogo.events import present_events
from nogo.mixture import responses
from nogo.sizes import estimate_linear, group_cells
from nogo.theory import load_theory_text

PROBES = """  x-given-lam:
    says: probe (an absent event, so no clause is left for the group)
    independent: {events: [A_in], of: [B.setting], given: [lam]}
  y-given-lam:
    says: probe
    independent: {events: [A], of: [A.setting], given: [lam]}
"""


def _friends(bundle: str):
    from conftest import THEORIES

    head, _ = (THEORIES / "friends-2x3-hidden.yaml").read_text().split("bundles:")
    return load_theory_text(head + PROBES + "bundles:\n  probe: " + bundle + "\n")


def _counterfactual(settings: int):
    s = ", ".join(str(i + 1) for i in range(settings))
    return load_theory_text(f"""title: a made-up scenario with many settings
scenario:
  parties:
    A: {{settings: [{s}], outcomes: [+1, -1]}}
    B: {{settings: [{s}], outcomes: [+1, -1]}}
assumptions:
  counterfactual:
    says: an outcome for every setting
    counterfactual: [A, B]
  hidden:
    says: a hidden variable
    hidden: lam
  lam-free:
    says: free of the settings
    independent: {{events: [lam], of: [A.setting, B.setting]}}
  agency-given-lam:
    says: A's outcome free of B's setting given lam
    independent: {{events: [A], of: [B.setting], given: [lam]}}
bundles:
  big: [counterfactual, hidden, lam-free, agency-given-lam]
""")


def test_convex_bundle_with_a_huge_linear_equivalent_is_refused_at_once():
    th = _counterfactual(8)  # 8 settings per party with counterfactual outcomes: 2048 per lab
    t0 = time.perf_counter()
    with pytest.raises(ModelTooLarge) as e:
        compile_bundle(th, "big")
    assert time.perf_counter() - t0 < 2.0
    msg = str(e.value)
    assert "4,194,304 columns" in msg and "convex polytope" in msg
    assert "'counterfactual'" in msg and "--max-columns" in msg
    # the estimate is the one nogo.sizes gives for the same clauses on the joint
    assert estimate_linear(th.scenario, th.resolve("big")[1]).columns == 4_194_304


def test_convex_shortcut_is_decided_before_any_response_is_listed(monkeypatch):
    def no_listing(*a, **k):
        raise AssertionError("responses were listed")
    monkeypatch.setattr(responses, "_deterministic_vertices", no_listing)
    monkeypatch.setattr(responses, "_polytope_vertices", no_listing)
    responses.group_vertices.cache_clear()
    for bundle, says in (("[hidden, lam-free, x-given-lam]", "262,144 deterministic responses"),
                         ("[absoluteness, hidden, lam-free, y-given-lam]", "100 cells")):
        m = compile_bundle(_friends(bundle), "probe")
        assert m.kind == "linear" and says in m.notes[0]


def test_convex_shortcut_gives_the_set_the_listing_gives():
    # the same bundle through both routes (listing 4,096 extreme responses, or the clauses on the joint)
    th = _friends("[hidden, lam-free, y-given-lam]")
    listed = compile_bundle(th, "probe")
    joint = compile_bundle(th, "probe", max_response_cells=1)
    assert listed.kind == "mixture" and len(listed.columns) == 4096 and joint.kind == "linear"
    for spec in ("CHSH", "<A2 B2> + <A2 B3> + <A3 B2> - <A3 B3> <= 2",
                 "p(+1 +1|1 1) + p(+1 -1|1 1) - p(+1 +1|2 1) - p(+1 -1|2 1) <= 0"):
        ineq = resolve_inequality(th.scenario, spec)
        a, b = decide(listed, ineq), decide(joint, ineq)
        assert recheck(listed, a) is None and recheck(joint, b) is None
        assert (a.implied, a.maximum) == (b.implied, b.maximum)
    assert decide(listed, resolve_inequality(th.scenario, "CHSH")).maximum == 4  # Popescu & Rohrlich (1994)


@pytest.mark.parametrize("theory_name, bundle", [
    ("friends-2x3-hidden", "local-friendliness-hidden"),
    ("friends-2x2-hidden", None),
    ("hidden-2x3", "local-causality"),
    ("partly-determined-2x3", None),
])
def test_group_cells_counts_what_would_be_listed(theory, theory_name, bundle):
    th = theory(theory_name)
    names = [bundle] if bundle else list(th.bundles)
    for name in names:
        label, assumptions = th.resolve(name)
        events = present_events(th.scenario, assumptions)
        # every subset of the events that keeps a lab's outcome with its tied events
        parties = {e.party for e in events}
        for lab in sorted(parties):
            group = tuple(e for e in events if e.party == lab)
            assert group_cells(th.scenario, group) == len(responses._cells(th.scenario, group)), (name, lab)
        assert group_cells(th.scenario, tuple(events)) == len(responses._cells(th.scenario, tuple(events)))
        assert group_cells(th.scenario, tuple(events)) == estimate_linear(th.scenario, tuple(
            a for a in assumptions if not any(type(c).__name__ in ("Hidden", "Factorise", "Predetermined")
                                              or getattr(c, "given", None) for c in a.clauses))).columns


def test_counterfactual_group_cells_against_listing():
    th = _counterfactual(3)
    label, assumptions = th.resolve("big")
    events = tuple(present_events(th.scenario, assumptions))
    assert group_cells(th.scenario, events) == len(responses._cells(th.scenario, events)) == (3 * 2**3) ** 2


def test_command_line_refuses_in_one_line(tmp_path, capsys):
    from nogo.cli import main

    path = tmp_path / "many-settings.yaml"
    th_text = _counterfactual(8).text
    path.write_text(th_text)
    t0 = time.perf_counter()
    status = main(["check", str(path), "big", "<A1 B1> + <A1 B2> + <A2 B1> - <A2 B2> <= 2"])
    assert time.perf_counter() - t0 < 2.0
    err = capsys.readouterr().err
    assert status == 2 and "Traceback" not in err and "internal error" not in err
    assert "4,194,304 columns" in err and "--max-columns" in err
