"""The notebook API: nogo.load(path) and displayable results; the README's worked example runs."""

from __future__ import annotations

import doctest
import subprocess
import sys
from fractions import Fraction
from pathlib import Path

import nogo

ROOT = Path(__file__).resolve().parent.parent


def test_check_view_values_and_displays():
    th = nogo.load(ROOT / "theories" / "bell-2x2.yaml")
    r = th.check("Bell-local", "CHSH")  # local bound 2: Clauser, Horne, Shimony, Holt, PRL 23, 880 (1969)
    assert (r.verdict, r.value, r.bound) == ("implied", Fraction(2), Fraction(2))
    assert "IMPLIED" in str(r) and r._repr_html_().startswith("<p><b")
    assert r._repr_latex_().startswith("$") and r"\langle A_{1} B_{1} \rangle" in r._repr_latex_()
    g = th.check("no-signalling", "-<A1 B1> - <A1 B2> - <A2 B1> + <A2 B2> >= -2")
    assert g.value == -4 and not g.implied and r"\min" in g.latex()  # Popescu & Rohrlich (1994)
    assert g.to_dict()["minimum"] == "-4"


def test_minimal_and_quantum_views():
    th = nogo.load(ROOT / "theories" / "bell-2x2.yaml")
    m = th.minimal("CHSH")
    assert m.minimal == [["counterfactual", "setting-independence"]]  # Fine, PRL 48, 291 (1982)
    q = th.quantum(ROOT / "examples" / "experiments" / "larch-birch-chsh.yaml", ["CHSH"], ["Bell-local"])
    row = q.rows()[0]
    assert row["verdict"] == "violated" and abs(row["value"] - 2 * 2 ** 0.5) < 1e-9  # Tsirelson (1980)
    assert "violated" in str(q) and q.robustness[0].inside is False


def test_import_is_light():
    out = subprocess.run([sys.executable, "-c", "import nogo, sys; print(sorted(m for m in "
                          "('numpy', 'scipy', 'cvxpy', 'matplotlib', 'nogo.theory') if m in sys.modules))"],
                         capture_output=True, text=True, cwd=ROOT, check=True).stdout
    assert out.strip() == "[]"


def test_readme_worked_example_runs():
    res = doctest.testfile(str(ROOT / "README.md"), module_relative=False, optionflags=doctest.ELLIPSIS)
    assert res.attempted >= 3 and res.failed == 0
