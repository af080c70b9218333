"""What a researcher sees: catalog entries under any names, numbers in the written form, plain output.

Sources of the check values:
* CHSH: J. F. Clauser, M. A. Horne, A. Shimony, R. A. Holt, PRL 23, 880 (1969) — local bound 2;
* no-signalling maximum 4: S. Popescu, D. Rohrlich, Found. Phys. 24, 379 (1994);
* quantum maximum 2*sqrt(2): B. S. Tsirelson, Lett. Math. Phys. 4, 93 (1980);
* 8 versions of CHSH and 16 positivity terms in the 2x2x2 local polytope: A. Fine, PRL 48, 291 (1982)
  (24 facets = 16 positivity + 8 CHSH); 576 I3322 facets of the 2x3x2 local polytope:
  D. Collins, N. Gisin, J. Phys. A 37, 1775 (2004) (class size from memory).
"""

from __future__ import annotations

import json
import math
from fractions import Fraction
from pathlib import Path

import pytest

from nogo.catalog import resolve_inequality, versions
from nogo.check import decide
from nogo.cli import main
from nogo.compile import compile_bundle
from nogo.errors import InputError
from nogo.symmetry import orbit
from nogo.theory import load_theory

ROOT = Path(__file__).resolve().parent.parent
BELL = str(ROOT / "theories" / "bell-2x2.yaml")
EXP = str(ROOT / "examples" / "experiments" / "larch-birch-chsh.yaml")
MIRRORED_CHSH = "-<A1 B1> - <A1 B2> - <A2 B1> + <A2 B2> >= -2"  # CHSH written with >=


def renamed_bell(tmp_path: Path, outcomes="[0, 1]", settings="[x, y]") -> str:
    """The shipped Bell theory with parties Oak/Elm, settings x/y and outcomes 0/1 (names of our own)."""
    text = (ROOT / "theories" / "bell-2x2.yaml").read_text()
    text = text.replace("\n    A: {", "\n    Oak: {").replace("\n    B: {", "\n    Elm: {")
    text = text.replace("[A, B]", "[Oak, Elm]").replace('"A@*"', '"Oak@*"').replace('"B@*"', '"Elm@*"')
    text = text.replace("A.setting", "Oak.setting").replace("B.setting", "Elm.setting")
    text = text.replace("events: [A]", "events: [Oak]").replace("events: [B]", "events: [Elm]")
    text = text.replace("outcomes: [+1, -1]", f"outcomes: {outcomes}").replace("settings: [1, 2]",
                                                                               f"settings: {settings}")
    p = tmp_path / "oak-elm.yaml"
    p.write_text(text)
    return str(p)


def run(capsys, *argv) -> tuple[int, str]:
    code = main(list(argv))
    return code, capsys.readouterr().out


# -- catalog entries under any names -----------------------------------------------------
def test_chsh_under_other_names_and_01_outcomes(tmp_path):
    """Same verdicts and maxima as under A/B and +1/-1 (CHSH 1969; Popescu & Rohrlich 1994)."""
    path = renamed_bell(tmp_path)
    th, ref = load_theory(path), load_theory(BELL)
    for bundle, expected in (("Bell-local", 2), ("no-signalling", 4)):
        got = decide(compile_bundle(th, bundle), resolve_inequality(th.scenario, "CHSH"))
        want = decide(compile_bundle(ref, bundle), resolve_inequality(ref.scenario, "CHSH"))
        assert got.maximum == want.maximum == expected
        assert got.verdict == want.verdict
    ineq = resolve_inequality(th.scenario, "CHSH")
    assert "Oak_x" in ineq.display() and "p(" not in ineq.display()  # the entry's own notation
    assert "parties Oak, Elm for A, B" in ineq.origin and "outcomes 0, +1 for +1, -1" in ineq.origin


def test_chsh_versions_under_other_names_keep_the_notation(tmp_path):
    th = load_theory(renamed_bell(tmp_path))
    vs = versions(resolve_inequality(th.scenario, "CHSH"))
    assert len(vs) == 8  # Fine (1982): 8 CHSH facets
    assert all("<Oak_" in v.display() and "p(" not in v.display() for v in vs)
    want = {q.canonical() for q in orbit(resolve_inequality(th.scenario, "CHSH"))}
    assert {v.canonical() for v in vs} == want  # the text shown is exactly each version
    model = compile_bundle(th, "Bell-local")
    assert all(decide(model, v).maximum == 2 for v in vs)


def test_explicit_match_and_its_errors(tmp_path):
    th = load_theory(renamed_bell(tmp_path))
    q = resolve_inequality(th.scenario, "CHSH", match="A=Elm,B=Oak,+1=1,-1=0")
    assert "as given by --match" in q.origin
    assert decide(compile_bundle(th, "no-signalling"), q).maximum == 4
    with pytest.raises(InputError, match="not a party"):
        resolve_inequality(th.scenario, "CHSH", match="A=Pine,B=Oak")
    with pytest.raises(InputError, match="one to one"):
        resolve_inequality(th.scenario, "CHSH", match="+1=0,-1=0")


def test_shape_mismatch_is_refused():
    th = load_theory(ROOT / "theories" / "bell-3x2.yaml")
    with pytest.raises(InputError, match="written for 2 parties"):
        resolve_inequality(th.scenario, "CHSH")


def test_positivity_versions_print_one_term_with_their_sense():
    th = load_theory(BELL)
    vs = versions(resolve_inequality(th.scenario, "positivity"))
    assert len(vs) == 16  # Fine (1982): 16 positivity facets
    assert all(v.display().startswith("p(") and v.display().endswith(">= 0") for v in vs)


@pytest.mark.slow
def test_i3322_versions_in_collins_gisin_notation():
    th = load_theory(ROOT / "theories" / "bell-2x3.yaml")
    vs = versions(resolve_inequality(th.scenario, "I3322"))
    assert len(vs) == 576  # Collins & Gisin (2004), from memory
    assert all("p_A(" in v.display() or "p_B(" in v.display() for v in vs)


def test_inner_observer_with_other_labels_needs_relabel(tmp_path):
    text = (ROOT / "theories" / "friends-2x2.yaml").read_text()
    bad = text.replace("A_in: {lab: A, outcomes: [+1, -1]", "A_in: {lab: A, outcomes: [0, 1]")
    p = tmp_path / "t.yaml"
    p.write_text(bad)
    with pytest.raises(InputError, match="relabel"):
        load_theory(p)
    flipped = text.replace("A_in: {lab: A, outcomes: [+1, -1]", "A_in: {lab: A, outcomes: [-1, +1]")
    p.write_text(flipped)
    obs = load_theory(p).scenario.observer("A_in")
    assert obs.relabel == (1, 0)  # matched by label, not by position


# -- every number in the written form -------------------------------------------------------
def test_check_words_for_ge(capsys):
    code, out = run(capsys, "check", BELL, "Bell-local", "<A1 B1>+<A1 B2> >= 0")
    assert code == 1
    assert "the smallest value of the left side over the bundle's set is -2 (exact), < the bound 0" in out
    code, out = run(capsys, "check", BELL, "Bell-local", MIRRORED_CHSH, "--json")
    d = json.loads(out)
    assert code == 0 and d["verdict"] == "implied"
    assert d["sense"] == ">=" and d["minimum"] == "-2" and d["value"] == "-2" and "maximum" not in d
    assert d["inequality"]["bound"] == "-2" and d["inequality"]["sense"] == ">="
    assert d["certificate"]["bound"] == "-2"
    code, out = run(capsys, "check", BELL, "no-signalling", MIRRORED_CHSH, "--json")
    d = json.loads(out)
    assert d["minimum"] == "-4" and d["counterexample"]["value"] == "-4"  # Popescu & Rohrlich (1994)


def test_check_constant_on_the_left(capsys):
    code, out = run(capsys, "check", BELL, "Bell-local", "<A1 B1> + 1 <= 2", "--json")
    d = json.loads(out)
    assert code == 0 and d["maximum"] == "2" and d["inequality"]["bound"] == "2"


def test_check_all_versions_table(capsys):
    code, out = run(capsys, "check", BELL, "no-signalling", "CHSH", "--all-versions")
    lines = [x for x in out.splitlines() if "NOT implied" in x]
    assert len(lines) == 8 and all("max      4" in x and "<A" in x and "p(" not in x for x in lines)


def test_quantum_values_in_written_form(capsys):
    code, out = run(capsys, "quantum", EXP, "-i", MIRRORED_CHSH, "-i", "CHSH", "-b", "Bell-local", "--json")
    d = json.loads(out)
    ge, le = d["inequalities"]
    assert ge["sense"] == ">=" and ge["bound"] == "-2" and ge["verdict"] == "violated"
    assert abs(ge["value"] + 2 * math.sqrt(2)) < 1e-9 and "below the bound -2" in ge["evidence"]  # Tsirelson
    assert abs(le["value"] - 2 * math.sqrt(2)) < 1e-9 and "above the bound 2" in le["evidence"]
    sep = d["bundles"][0]["separating"]
    assert sep["form"] == "Collins–Gisin" and d["bundles"][0]["evidence"]
    lo = float(sep["value"].strip("[]").split(",")[0])
    assert lo > float(Fraction(sep["bound"]))  # the value printed is that of the text printed


def test_visibility_json_and_plot(capsys, tmp_path):
    png = tmp_path / "sweep.svg"
    code, out = run(capsys, "visibility", EXP, "Bell-local", "--json", "--plot", str(png), "--steps", "5")
    d = json.loads(out)
    assert code == 0 and d["evidence"] and d["separating"]["sense"] == "<="
    assert abs(d["critical_visibility"] - 1 / math.sqrt(2)) < 1e-6  # singlet, white noise (from memory)
    svg = png.read_text()
    assert "left side of the inequality, as written" in svg


def test_optimise_ge_and_saved_path(capsys, tmp_path):
    target = tmp_path / "best.yaml"
    code, out = run(capsys, "optimise", EXP, MIRRORED_CHSH, "--starts", "2", "--json", "--write", str(target))
    d = json.loads(out)
    assert code == 0 and d["sense"] == ">=" and d["extreme"] == "smallest"
    assert d["best"] < -2.8284 and "below the bound -2" in d["evidence"]  # Tsirelson (1980)
    saved = target.read_text()
    assert "/../" not in saved and "binary-rational" not in out
    code, out = run(capsys, "quantum", str(target), "-i", "CHSH", "-b", "no-signalling", "--json")
    assert json.loads(out)["inequalities"][0]["verdict"] == "violated"


def test_qbound_ge(capsys):
    code, out = run(capsys, "qbound", BELL, MIRRORED_CHSH, "--level", "1", "--json")
    d = json.loads(out)
    c = d["levels"][0]["certified"]
    assert d["sense"] == ">=" and -2 * math.sqrt(2) - 1e-6 < c <= -2 * math.sqrt(2) + 1e-12  # NPA (2007)


def test_minimal_ge(capsys):
    code, out = run(capsys, "minimal", BELL, MIRRORED_CHSH, "--json", "--quiet")
    d = json.loads(out)
    r = d["results"][0]
    assert r["inequality"]["sense"] == ">=" and r["inequality"]["bound"] == "-2"
    assert all(a["minimum"] == "-2" for a in r["minimal"]) and all(a["minimum"] == "-4" for a in r["maximal"])


def test_catalog_versions_json(capsys, tmp_path):
    code, out = run(capsys, "catalog", "CHSH", "--theory", renamed_bell(tmp_path), "--json")
    d = json.loads(out)
    assert len(d["versions"]) == 8 and d["read_as"] and all(v["sense"] == "<=" for v in d["versions"])


# -- readable output ----------------------------------------------------------------------
def test_plain_notes_and_rows(capsys):
    from nogo.report import plain_note, plain_row

    assert plain_note("latent ['A@1', 'A@2'] absent; groups are [['A'], ['B']]") == \
        "latent A@1, A@2 absent; groups are {A}, {B}"
    assert plain_row("q(A=-1, A_in=-1 | A=1, B=2) = 1") == "q(A=-1, A_in=-1 | A.setting=1, B.setting=2) = 1"
    code, out = run(capsys, "check", str(ROOT / "theories" / "friends-2x2.yaml"), "local-friendliness", "CHSH")
    assert "A.setting=" in out and "['" not in out


def test_piped_tables_do_not_wrap(capsys):
    code, out = run(capsys, "minimal", str(ROOT / "theories" / "friends-2x2.yaml"), "CHSH", "--quiet")
    rows = [x for x in out.splitlines() if "counterexample re-checked" in x]
    assert rows and all(x.count("│") == 4 for x in rows)  # one line per row: nothing folded
    assert "+ implied" in out and "- not implied" in out  # the lattice reads without colour


@pytest.mark.parametrize("cmd", ["check", "catalog", "show", "quantum", "visibility", "optimise", "qbound",
                                 "minimal", "slice"])
def test_help_has_description_exit_status_and_example(cmd, capsys):
    with pytest.raises(SystemExit):
        main([cmd, "--help"])
    out = capsys.readouterr().out
    assert "exit status" in out and "example" in out
