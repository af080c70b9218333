"""Slices through behaviour space: exact polygons of bundles' sets and the quantum band.

Check values along the PR direction of the plane through the uniform behaviour, the PR box and a
deterministic local point, p(r) = (1 - r) uniform + r PR, where CHSH(p(r)) = 4 r:
* Bell-local ends at CHSH = 2 (r = 1/2): Clauser, Horne, Shimony, Holt, PRL 23, 880 (1969);
* no-signalling ends at CHSH = 4 (r = 1, the PR box): Popescu & Rohrlich, Found. Phys. 24, 379 (1994);
* quantum ends at CHSH = 2*sqrt(2) (r = 1/sqrt(2)): Tsirelson, Lett. Math. Phys. 4, 93 (1980);
  the NPA level-1 bound 2*sqrt(2): Navascués, Pironio, Acín, PRL 98, 010401 (2007).
"""

from __future__ import annotations

import json
import math
from fractions import Fraction
from pathlib import Path

import pytest

from nogo.catalog import resolve_inequality, versions
from nogo.cli import main
from nogo.compile import compile_bundle
from nogo.errors import InputError
from nogo.slices import along, cross_section, deterministic, pr_box, quantum_along, quantum_band, uniform
from nogo.theory import load_theory

ROOT = Path(__file__).resolve().parent.parent
BELL = ROOT / "theories" / "bell-2x2.yaml"
EXP = ROOT / "examples" / "experiments" / "larch-birch-chsh.yaml"


@pytest.fixture(scope="module")
def plane():
    th = load_theory(BELL)
    sc = th.scenario
    P0, P1, P2 = uniform(sc), pr_box(sc), deterministic(sc)
    D1 = [a - b for a, b in zip(P1, P0)]
    D2 = [a - b for a, b in zip(P2, P0)]
    return th, P0, D1, D2


def _chsh_at(th, P0, D1, r):
    chsh = resolve_inequality(th.scenario, "CHSH")
    coords = th.scenario.coordinates()
    return sum((chsh.coeffs.get(k, 0) * (p + r * d) for k, p, d in zip(coords, P0, D1)), Fraction(0))


def test_pr_direction_meets_2_4_and_tsirelson(plane):
    th, P0, D1, D2 = plane
    u = (Fraction(1), Fraction(0))
    local = cross_section(compile_bundle(th, "Bell-local"), P0, D1, D2)
    ns = cross_section(compile_bundle(th, "no-signalling"), P0, D1, D2)
    assert _chsh_at(th, P0, D1, along(local.vertices, u)) == 2  # CHSH (1969)
    assert _chsh_at(th, P0, D1, along(ns.vertices, u)) == 4  # Popescu & Rohrlich (1994)
    from nogo.quantum import load_experiment

    band = quantum_band(th.scenario, P0, D1, D2, [load_experiment(EXP)], directions=4, search=False)
    inner, outer = quantum_along(band, (1.0, 0.0))
    assert outer is not None and inner is not None
    assert 4 * inner <= 2 * math.sqrt(2) + 1e-7 and 4 * inner > 2 * math.sqrt(2) - 1e-7  # Tsirelson (1980)
    assert 2 * math.sqrt(2) - 1e-9 < 4 * outer < 2 * math.sqrt(2) + 1e-6  # certified NPA level 1
    assert all(h["certified"] is not None for h in band.outer_halfplanes)


def test_polygon_vertices_are_in_the_set_and_edges_tight(plane):
    """Independent check: every Bell-local vertex obeys every CHSH version and positivity exactly,
    and every edge is attained by two vertices (a polygon, not a guess)."""
    th, P0, D1, D2 = plane
    S = cross_section(compile_bundle(th, "Bell-local"), P0, D1, D2)
    sc = th.scenario
    facets = versions(resolve_inequality(sc, "CHSH")) + versions(resolve_inequality(sc, "positivity"))
    coords = sc.coordinates()
    on_boundary = 0
    for s, t in S.vertices:
        p = {k: a + s * d1 + t * d2 for k, a, d1, d2 in zip(coords, P0, D1, D2)}
        vals = [(f.value(p), f.bound) for f in facets]
        assert all(v <= b for v, b in vals)
        on_boundary += sum(v == b for v, b in vals) >= 1
    assert on_boundary == len(S.vertices)
    for e in S.edges:
        hits = [v for v in S.vertices if e.normal[0] * v[0] + e.normal[1] * v[1] == e.offset]
        assert len(hits) == 2 and all(e.normal[0] * v[0] + e.normal[1] * v[1] <= e.offset for v in S.vertices)


def test_cli_json_png_and_svg(tmp_path, capsys):
    png, svg = tmp_path / "s.png", tmp_path / "s.svg"
    code = main(["slice", str(BELL), "uniform", "PR", "deterministic", "-b", "Bell-local", "-b", "no-signalling",
                 "--json", "--plot", str(png), "-i", "CHSH"])
    d = json.loads(capsys.readouterr().out)
    assert code == 0 and png.stat().st_size > 1000
    local = d["bundles"][0]
    assert len(local["vertices"]) == 5 and ["4/7", "-1/7"] in local["vertices"]
    assert all(Fraction(x) == Fraction(x) for v in local["vertices"] for x in v)
    assert d["lines"][0]["reads"].startswith("left side = bound")
    code = main(["slice", str(BELL), "uniform", "PR", "deterministic:A=-1,B=-1", "-b", "no-signalling",
                 "--plot", str(svg)])
    assert code == 0 and "<svg" in svg.read_text()[:400]


def test_bad_planes_are_refused(capsys):
    with pytest.raises(InputError, match="one line"):
        main_raise(["slice", str(BELL), "uniform", "PR", "PR"])
    with pytest.raises(InputError, match="neither a named behaviour"):
        main_raise(["slice", str(BELL), "uniform", "PR", "nowhere.yaml"])


def main_raise(argv):
    from nogo.cli import build_parser

    args = build_parser().parse_args(argv)
    return args.run(args)


def test_cli_quantum_band_is_certified(capsys):
    """Without an experiment: certified NPA half-planes outside; the PR ray is bounded by 1/sqrt(2)
    (Tsirelson 1980; NPA 2007), and no inner point is claimed beyond the product behaviours."""
    code = main(["slice", str(BELL), "uniform", "PR", "deterministic", "-b", "no-signalling", "--quantum",
                 "--directions", "4", "--json"])
    d = json.loads(capsys.readouterr().out)["quantum"]
    assert code == 0 and len(d["outside"]) == 4
    # along the PR ray (t = 0) each half-plane a s + b t <= c gives s <= c / a when a > 0
    r = min(Fraction(h["at_most"]) / Fraction(h["a"]) for h in d["outside"] if Fraction(h["a"]) > 0)
    assert 1 / math.sqrt(2) - 1e-9 < float(r) < 1 / math.sqrt(2) + 1e-6
    assert all(p["source"].startswith("uniform or deterministic") for p in d["inside"])
