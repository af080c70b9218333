"""An inner observer read out at several settings, each with its own relabelling.

Check values and their sources:

* One record shown at two settings makes them copies: with A = r_x(A_in) at
  every read-out setting x, every behaviour obeys p(a b | x y) =
  p(r_1 r_x^-1(a) b | 1 y) (the semantics in DEVELOPERS.md, "Several
  read-outs"); with the sign flip at setting 3, <A3 By> = -<A1 By> exactly.
* Read out at *every* setting of its lab, the friend's record predetermines
  A's outcome at each setting; the set is then the Bell-local set of the
  scenario in which A has one measurement (A. Fine, PRL 48, 291 (1982): a
  party with one setting always admits a local model), i.e. the convex hull of
  the deterministic behaviours with a(x) = r_x(a(1)).  Its vertices are
  compared with that list, exactly.  It is strictly inside the Bell-local set
  of the full scenario (the copies are equalities), and every CHSH version is
  bounded by 2 (J. F. Clauser, M. A. Horne, A. Shimony, R. A. Holt, PRL 23,
  880 (1969)), reached.
* Read out at one setting (``read_out_at: [1]``) the model is the very model
  of the single form (friends-2x3: 932 facets, K.-W. Bong et al., Nature
  Physics 16, 1199 (2020), arXiv:1907.05607).
* A relabelled read-out gives the relabelled set: the maxima of f over the
  relabelled theory equal the maxima of f composed with the sign flip over the
  plain one, for CHSH versions and random inequalities (exact rationals).
* The z3 cross-check walks the branches of the read-out rules afresh and
  agrees with the LP (no published value; the check is the second encoding).
"""

from __future__ import annotations

import itertools
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest

from nogo.check import decide, recheck
from nogo.compile import compile_bundle
from nogo.errors import InputError
from nogo.events import present_events, read_out_rules
from nogo.inequality import parse_inequality
from nogo.theory import load_theory, load_theory_text

ROOT = Path(__file__).resolve().parent.parent
T = ROOT / "theories"
DEMO = T / "friends-2x3-two-readouts.yaml"
FLIP_LINE = "      relabel: {3: {+1: -1, -1: +1}}\n"


def _head(settings: str = "[1, 2, 3]") -> str:
    return f"""scenario:
  parties:
    A: {{settings: {settings}, outcomes: [+1, -1]}}
    B: {{settings: {settings}, outcomes: [+1, -1]}}
  inner_observers:
"""


# -- declarations refused, with file, line and what would be right ---------------------------
@pytest.mark.parametrize("observers, words, hint, line", [
    ("    F: {lab: A, read_out_at: [1, 4]}\n", "party 'A' has no setting '4'", "one of", 6),
    ("    F: {lab: A, read_out_at: [1, 3, 1]}\n", "names setting 1 twice", "each read-out setting once", 6),
    ("    F: {lab: A, read_out_at: []}\n", "lists no setting", "[1, 3]", 6),
    ("    F: {lab: A, read_out_at: [1, always]}\n", "cannot be one of several", "alone", 6),
    ("    F: {lab: A, read_out_at: [1, 3], relabel: {3: {+1: -1, -1: -1}}}\n",
     "at setting 3 is not a permutation", "exactly one observer outcome", 6),
    ("    F: {lab: A, outcomes: [0, 1, 2], read_out_at: [1, 3], relabel: {0: +1, 1: -1, 2: -1}}\n",
     "is not a permutation", "merges outcomes", 6),
    ("    F: {lab: A, read_out_at: [1, 3], relabel: {2: {+1: -1, -1: +1}}}\n",
     "names setting 2, which is not a read-out setting of 'F'", "['1', '3']", 6),
    ("    F: {lab: A, read_out_at: [1, 3], relabel: {+1: -1, 3: {+1: -1, -1: +1}}}\n",
     "mixes outcome labels and per-setting maps", "{setting:", 6),
    ("    F: {lab: A, read_out_at: [1, 3]}\n    G: {lab: A, read_out_at: [2, 3]}\n",
     "'F' and 'G' are both read out at setting 3 of 'A'", "a setting of its own", 7),
    ("    F: {lab: A, read_out_at: 2}\n    G: {lab: A, read_out_at: [1, 2]}\n",
     "'F' and 'G' are both read out at setting 2 of 'A'", "only one observer", 7),
])
def test_bad_several_read_outs_are_refused(observers, words, hint, line):
    with pytest.raises(InputError) as exc:
        load_theory_text(_head() + observers + "assumptions: {}\nbundles: {}\n", "several.yaml")
    assert words in exc.value.message, exc.value.message
    assert hint in (exc.value.hint or ""), exc.value.hint
    assert exc.value.where.file == "several.yaml" and exc.value.where.line == line


def test_the_three_relabel_shapes_read_alike():
    one_map = _head() + "    F: {lab: A, read_out_at: [1, 3], relabel: {+1: -1, -1: +1}}\n"
    per = _head() + "    F: {lab: A, read_out_at: [1, 3], relabel: {1: {+1: -1, -1: +1}, 3: {+1: -1, -1: +1}}}\n"
    tail = "assumptions: {}\nbundles: {}\n"
    a, b = (load_theory_text(t + tail, "x.yaml").scenario.observer("F") for t in (one_map, per))
    assert a.read_outs == b.read_outs == (("1", (1, 0)), ("3", (1, 0)))
    plain = load_theory_text(_head() + "    F: {lab: A, read_out_at: [1, 3]}\n" + tail, "x.yaml").scenario
    assert plain.observer("F").read_outs == (("1", (0, 1)), ("3", (0, 1))) and plain.nested
    demo = load_theory(DEMO).scenario.observer("A_in")
    assert demo.read_outs == (("1", (0, 1)), ("3", (1, 0)))  # unnamed setting 1: the labels unchanged


def test_rules_branch_one_per_setting_and_through_an_absent_lab():
    th = load_theory(DEMO)
    sc = th.scenario
    _, lf = th.resolve("local-friendliness")
    rules = {(r.target, r.source, r.shown, r.when) for r in read_out_rules(sc, present_events(sc, lf))}
    assert rules == {("A", "A_in", (0, 1), ((0, "1"),)), ("A", "A_in", (1, 0), ((0, "3"),)),
                     ("B", "B_in", (0, 1), ((1, "1"),))}
    # a friend inside a choosing friend's lab, read out at both of its settings (flipped at 2), and the
    # choosing friend read out at A's settings 1 and 2 (flipped at 2); with the middle friend absent the
    # four composed rules are the products of the links
    text = _head("[1, 2]") + """    M: {lab: A, settings: [1, 2], read_out_at: [1, 2], relabel: {2: {+1: -1, -1: +1}}}
    D: {lab: M, read_out_at: [1, 2], relabel: {2: {+1: -1, -1: +1}}}
assumptions:
  deep: {absolute: [D]}
bundles: {}
"""
    th2 = load_theory_text(text, "chain.yaml")
    sc2 = th2.scenario
    _, deep = th2.resolve(["deep"])
    got = {(r.shown, r.when, r.via) for r in read_out_rules(sc2, present_events(sc2, deep))}
    i_m = sc2.party_index("M")
    assert got == {((0, 1), ((0, "1"), (i_m, "1")), ("M",)), ((1, 0), ((0, "1"), (i_m, "2")), ("M",)),
                   ((1, 0), ((0, "2"), (i_m, "1")), ("M",)), ((0, 1), ((0, "2"), (i_m, "2")), ("M",))}


# -- read out at one setting: the single form, exactly --------------------------------------------
def _model_key(model):
    cols = [(c.settings, c.events, c.values) for c in model.columns]
    rows = sorted(tuple(sorted(r.items())) + (("rhs", b),) for r, b in zip(model.rows, model.rhs))
    return cols, rows, [tuple(sorted(o.items())) for o in model.observe]


@pytest.mark.parametrize("written", ["read_out_at: [1]", "read_out_at: [1], relabel: {1: {+1: +1, -1: -1}}"])
def test_one_listed_setting_is_the_single_form(written):
    text = (T / "friends-2x3.yaml").read_text()
    listed = text.replace("A_in: {lab: A, outcomes: [+1, -1], read_out_at: 1}",
                          "A_in: {lab: A, outcomes: [+1, -1], " + written + "}")
    assert listed != text
    flat, mine = load_theory(T / "friends-2x3.yaml"), load_theory_text(listed, "listed.yaml")
    assert mine.scenario.observer("A_in").read_outs == flat.scenario.observer("A_in").read_outs
    for bundle in ("local-friendliness", "no-signalling", "Bell-local"):
        assert _model_key(compile_bundle(mine, bundle)) == _model_key(compile_bundle(flat, bundle)), bundle


# -- the relabelled set is the image of the plain one -----------------------------------------------
def _maximum(model, th, text) -> Fraction:
    r = decide(model, parse_inequality(th.scenario, text))
    assert recheck(model, r) is None
    return r.maximum


def _flip_a3(text: str) -> str:
    """The inequality composed with the sign flip of A's outcome at setting 3 (correlator form)."""
    return text.replace("<A3", "<-A3").replace("+ <-A3", "- <A3").replace("- <-A3", "+ <A3")


def _chsh_versions() -> list[str]:
    out = []
    pairs = list(itertools.combinations((1, 2, 3), 2))
    for (x1, x2), (y1, y2) in itertools.product(pairs, pairs):
        terms = [(x1, y1), (x1, y2), (x2, y1), (x2, y2)]
        for minus in range(4):
            out.append(" ".join(("-" if k == minus else "+") + f" <A{x} B{y}>"
                                for k, (x, y) in enumerate(terms)).lstrip("+ ") + " <= 2")
    return out


def test_relabelled_read_out_gives_the_relabelled_set():
    flipped = load_theory(DEMO)
    plain = load_theory_text(DEMO.read_text().replace(FLIP_LINE, ""), "plain.yaml")
    assert plain.scenario.observer("A_in").read_outs == (("1", (0, 1)), ("3", (0, 1)))
    mf, mp = compile_bundle(flipped, "local-friendliness"), compile_bundle(plain, "local-friendliness")
    texts = _chsh_versions()[::3] + ["<A1 B1> + <A3 B1> <= 0", "<A1 B2> - <A3 B2> <= 0",
                                     "<A2 B2> + <A2 B3> + <A3 B2> - <A3 B3> <= 2"]
    for t in texts:
        assert "<-" not in _flip_a3(t)
        assert _maximum(mf, flipped, t) == _maximum(mp, plain, _flip_a3(t)), t
    # the copies, exactly: <A3 By> = -<A1 By> under the flip, = +<A1 By> without it
    for y in (1, 2, 3):
        for sign, th, m in (("+", flipped, mf), ("-", plain, mp)):
            assert _maximum(m, th, f"<A1 B{y}> {sign} <A3 B{y}> <= 0") == 0
            assert _maximum(m, th, f"- <A1 B{y}> {'-' if sign == '+' else '+'} <A3 B{y}> <= 0") == 0
    # a CHSH version on A's settings {1, 3} reduces to 2<A1 B2>: bounded by 2 (CHSH 1969), reached
    assert _maximum(mf, flipped, "<A1 B1> + <A1 B2> + <A3 B1> - <A3 B2> <= 2") == 2
    # a version on A {2, 3}, B {2, 3} avoids B's read-out setting but uses A's setting 3, which is
    # read out: bounded by 2 (Bong et al. 2020: a CHSH version with a read-out setting holds)
    assert _maximum(mf, flipped, "<A2 B2> + <A2 B3> + <A3 B2> - <A3 B3> <= 2") == 2


def test_random_inequalities_map_with_the_relabelling():
    flipped = load_theory(DEMO)
    plain = load_theory_text(DEMO.read_text().replace(FLIP_LINE, ""), "plain.yaml")
    mf, mp = compile_bundle(flipped, "local-friendliness"), compile_bundle(plain, "local-friendliness")
    flip = {"+1": "-1", "-1": "+1"}
    rng = np.random.default_rng(16)
    coords = flipped.scenario.coordinates()
    for _ in range(5):
        w = {c: int(rng.integers(-3, 4)) for c in coords}

        def text(weights):
            return " ".join(f"{'+' if v > 0 else '-'} {abs(v)} p({' '.join(a)}|{' '.join(s)})"
                            for (s, a), v in weights.items() if v).lstrip("+ ") + " <= 0"
        moved = {(s, ((flip[a[0]],) + a[1:]) if s[0] == "3" else a): v for (s, a), v in w.items()}
        assert _maximum(mf, flipped, text(w)) == _maximum(mp, plain, text(moved))


# -- read out at every setting: the Bell-local set of a one-measurement A ----------------------------
EVERY_2x2 = _head("[1, 2]") + """    A_in: {lab: A, read_out_at: [1, 2], relabel: {2: {+1: -1, -1: +1}}}
    B_in: {lab: B, read_out_at: 1}
light_cone: {name: agency}
assumptions:
  absoluteness: {absolute: [A_in, B_in]}
  counterfactual: {counterfactual: [A, B]}
  setting-independence: {independent: {events: ["A@*", "B@*"], of: [A.setting, B.setting]}}
bundles:
  local-friendliness: [absoluteness, agency-A, agency-B]
  Bell-local: [counterfactual, setting-independence]
"""


def _deterministic_copies(sc, shows) -> set[tuple[Fraction, ...]]:
    """Deterministic behaviours with A's outcome at setting x = shows[x](A's record), B's any function."""
    a_outs, b = sc.party("A").outcomes, sc.party("B")
    out = set()
    for rec in a_outs:
        for resp in itertools.product(b.outcomes, repeat=len(b.settings)):
            bof = dict(zip(b.settings, resp))
            out.add(tuple(Fraction(int(a == (shows[s[0]](rec),) + (bof[s[1]],)))
                          for s, a in sc.coordinates()))
    return out


@pytest.mark.parametrize("settings", ["[1, 2]", "[1, 2, 3]"])
def test_read_out_at_every_setting_gives_the_local_set_of_one_measurement(settings):
    from nogo.facets import facets

    n = len(settings.split(","))
    every = "[" + ", ".join(str(k) for k in range(1, n + 1)) + "]"
    text = EVERY_2x2.replace("[1, 2]", settings).replace("read_out_at: " + settings, "read_out_at: " + every)
    th = load_theory_text(text, "every.yaml")
    sc = th.scenario
    assert [x for x, _ in sc.observer("A_in").read_outs] == [str(k) for k in range(1, n + 1)]
    r = facets(th, "local-friendliness", cache=False)
    flip = {"+1": "-1", "-1": "+1"}
    shows = {str(k): (lambda v: v) for k in range(1, n + 1)}
    shows["2"] = lambda v: flip[v]
    want = _deterministic_copies(sc, shows)
    assert len(want) == 2 * 2 ** n  # A's record (2) times B's deterministic responses
    assert set(r.vertices) == want  # Fine 1982: one measurement of A, every behaviour local
    # inside the Bell-local set: every CHSH version (sign pattern on settings 1, 2) bounded by 2, reached
    model, bell = compile_bundle(th, "local-friendliness"), compile_bundle(th, "Bell-local")
    chsh = "<A1 B1> + <A1 B2> + <A2 B1> - <A2 B2> <= 2"
    assert _maximum(model, th, chsh) == 2 and _maximum(bell, th, chsh) == 2
    # ... strictly: the copy <A2 B1> = -<A1 B1> is an equality here, not in the Bell-local set
    assert _maximum(model, th, "<A1 B1> + <A2 B1> <= 0") == 0
    assert _maximum(bell, th, "<A1 B1> + <A2 B1> <= 0") == 2


# -- the z3 cross-check walks the branches afresh --------------------------------------------------
def test_smt_reads_several_read_outs_like_the_linear_model():
    from nogo.smt import implies_z3

    text = EVERY_2x2
    th = load_theory_text(text, "every.yaml")
    model = compile_bundle(th, "local-friendliness")
    verdicts = []
    for t in ("<A1 B1> + <A2 B1> <= 0", "- <A1 B1> - <A2 B1> <= 0", "<A1 B1> - <A2 B1> <= 0",
              "<A1 B1> + <A1 B2> + <A2 B1> - <A2 B2> <= 2", "<A1 B2> + <A2 B2> <= 0"):
        ineq = parse_inequality(th.scenario, t)
        z3_says = implies_z3(th, "local-friendliness", ineq)
        assert z3_says == decide(model, ineq).implied, t
        verdicts.append(z3_says)
    assert verdicts == [True, True, False, True, True]


PATTERN = """title: A always shows +1, B shows +1 at setting 1
parties: [A, B]
unlisted: impossible
runs:
  - {settings: [1, 1], possible: [[+1, +1]]}
  - {settings: [1, 2], possible: [[+1, +1], [+1, -1]]}
  - {settings: [2, 1], possible: [[+1, +1]]}
  - {settings: [2, 2], possible: [[+1, +1], [+1, -1]]}
"""


def test_possibilistic_backend_reads_several_read_outs_and_its_checker_agrees(tmp_path):
    # A shows +1 in every run (a no-signalling support pattern).  At A's setting 1, A = A_in, so A_in = +1 in
    # every run there; local agency keeps A_in's support at A's setting 2, where A shows -A_in = -1: A = +1
    # cannot occur.  Declared possible, it contradicts absoluteness with local agency (the copy relation of
    # the module docstring, in supports); without absoluteness the pattern is consistent.  The proof is re-checked by the
    # independent checker (nogo.possibilistic.checker), which walks the two read-outs afresh.
    from nogo.possibilistic import check_proof, decide_pattern, load_pattern

    th = load_theory_text(EVERY_2x2.replace("bundles:\n", "bundles:\n  agency-only: [agency-A, agency-B]\n"),
                          "every.yaml")
    (tmp_path / "copy.yaml").write_text(PATTERN)
    pat = load_pattern(tmp_path / "copy.yaml", th.scenario)
    r = decide_pattern(th, "local-friendliness", pat, time_limit=30)
    assert r.contradiction
    assert check_proof(th, "local-friendliness", pat, r.proof) == []
    assert not decide_pattern(th, "agency-only", pat).contradiction
    # with the flip dropped (A = A_in at both settings) the same pattern is consistent
    plain = load_theory_text(EVERY_2x2.replace(", relabel: {2: {+1: -1, -1: +1}}", ""), "plain.yaml")
    assert not decide_pattern(plain, "local-friendliness", load_pattern(tmp_path / "copy.yaml", plain.scenario)
                              ).contradiction


def test_mixture_model_reads_several_read_outs_like_the_linear_one():
    # the partially deterministic set (records fixed by a hidden variable and their lab's setting; the
    # correspondence with local friendliness is stated for one read-out per lab in arXiv:2510.25127) with A's
    # friend read out at settings 1 and 3, flipped at 3: its exact maxima equal local friendliness's here on
    # the copy relation, CHSH versions, I3322 (Collins & Gisin, J. Phys. A 37, 1775 (2004)) and random
    # inequalities (no published value for two read-outs: the check is the second compiler)
    text = (T / "partly-determined-2x3.yaml").read_text().replace(
        "A_in: {lab: A, outcomes: [+1, -1], read_out_at: 1}",
        "A_in: {lab: A, outcomes: [+1, -1], read_out_at: [1, 3], relabel: {3: {+1: -1, -1: +1}}}")
    text = text.replace("bundles:\n", """  agency-A: {independent: {events: [B, A_in, B_in], of: [A.setting]}}
  agency-B: {independent: {events: [A, A_in, B_in], of: [B.setting]}}
bundles:
  lf: [absoluteness, agency-A, agency-B]
""")
    th = load_theory_text(text, "partly.yaml")
    pd, lf = compile_bundle(th, "partly-determined"), compile_bundle(th, "lf")
    assert pd.kind == "mixture" and lf.kind == "linear"
    texts = ["<A1 B1> + <A3 B1> <= 0", "- <A1 B1> - <A3 B1> <= 0", "<A1 B1> + <A1 B2> + <A2 B1> - <A2 B2> <= 2",
             "<A2 B2> + <A2 B3> + <A1 B2> - <A1 B3> <= 2",
             "p_AB(+1 +1|1 1) + p_AB(+1 +1|1 2) + p_AB(+1 +1|1 3) + p_AB(+1 +1|2 1) + p_AB(+1 +1|2 2)"
             " - p_AB(+1 +1|2 3) + p_AB(+1 +1|3 1) - p_AB(+1 +1|3 2) - p_A(+1|1) - 2 p_B(+1|1) - p_B(+1|2) <= 0"]
    rng = np.random.default_rng(3)
    for _ in range(6):
        w = {c: int(rng.integers(-3, 4)) for c in th.scenario.coordinates()}
        texts.append(" ".join(f"{'+' if v > 0 else '-'} {abs(v)} p({' '.join(a)}|{' '.join(s)})"
                              for (s, a), v in w.items() if v).lstrip("+ ") + " <= 0")
    got = [(_maximum(pd, th, t), _maximum(lf, th, t)) for t in texts]
    assert all(a == b for a, b in got), got
    assert [a for a, _ in got[:5]] == [0, 0, 2, 2, 0]
