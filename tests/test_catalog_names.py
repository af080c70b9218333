"""Facet classes are named after catalog entries whatever the scenario calls its parties.

`nogo check` reads a catalog entry in a scenario with other party names by
position (first entry party = first scenario party); the facet namer used to
skip every entry whose party names were not the scenario's, so the Mermin
class of the three-party Bell-local set (N. D. Mermin, PRL 65, 1838 (1990);
a class of 16 of Śliwa's 46, C. Śliwa, Phys. Lett. A 317, 165 (2003)) and
CHSH / positivity in two-party sets went unnamed as soon as the parties were
called, e.g., Ann, Bo and Cy.
"""

from __future__ import annotations

import itertools
from fractions import Fraction
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent


def _renamed(src: str, names: dict[str, str], dest: Path) -> Path:
    import re

    text = (ROOT / "theories" / src).read_text()
    for old, new in names.items():
        text = re.sub(rf"\b{old}\b(?!\.yaml)", new, text)
    dest.write_text(text)
    return dest


def test_chsh_and_positivity_named_when_parties_are_renamed(tmp_path):
    # 24 facets: 16 positivity, 8 CHSH (A. Fine, PRL 48, 291 (1982); Clauser, Horne, Shimony, Holt,
    # PRL 23, 880 (1969)); the catalog entries are written for parties A, B.
    from nogo.facets import facets
    from nogo.theory import load_theory

    th = load_theory(_renamed("bell-2x2.yaml", {"A": "Ann", "B": "Bo"}, tmp_path / "renamed.yaml"))
    assert th.scenario.party_names == ("Ann", "Bo")
    r = facets(th, "Bell-local", cache=False)
    assert sorted((c.name, c.size) for c in r.classes) == [("CHSH", 8), ("positivity", 16)]


def _deterministic_points(sc):
    """Every deterministic local behaviour: one outcome per party and setting (Fine 1982)."""
    coords = sc.coordinates()
    per = [[dict(zip(p.settings, outs)) for outs in itertools.product(p.outcomes, repeat=len(p.settings))]
           for p in sc.parties]
    pts = []
    for choice in itertools.product(*per):
        pts.append(tuple(Fraction(int(all(choice[i][s[i]] == a[i] for i in range(len(s))))) for s, a in coords))
    return pts


def test_mermin_named_in_a_three_party_scenario_with_other_party_names(tmp_path):
    # Mermin's inequality written by hand in the renamed scenario's own names must be recognised by
    # the catalog entry (written for A, B, C) read by position.  Mermin, PRL 65, 1838 (1990).
    from nogo.facets import _catalog_names
    from nogo.inequality import parse_inequality
    from nogo.polytope import HullFacet, Polytope, choose_frame
    from nogo.theory import load_theory

    th = load_theory(_renamed("bell-3x2.yaml", {"A": "Ann", "B": "Bo", "C": "Cy"}, tmp_path / "r.yaml"))
    sc = th.scenario
    pts = _deterministic_points(sc)
    assert len(pts) == 64
    fr = choose_frame(sc, pts, "collins-gisin")
    assert fr.dim == 26
    by_hand = parse_inequality(sc, "<Ann1 Bo1 Cy1> - <Ann1 Bo2 Cy2> - <Ann2 Bo1 Cy2> - <Ann2 Bo2 Cy1> <= 2")
    other = parse_inequality(sc, "<Ann2 Bo2 Cy2> - <Ann2 Bo1 Cy1> - <Ann1 Bo2 Cy1> - <Ann1 Bo1 Cy2> <= 2")
    chsh_like = parse_inequality(sc, "<Ann1 Bo1> + <Ann1 Bo2> + <Ann2 Bo1> - <Ann2 Bo2> <= 2")
    keys = [fr.reduce(q.vector(), q.bound) for q in (by_hand, other, chsh_like)]
    P = Polytope(sc, "Bell-local", (), fr, pts, [], [HullFacet(a, b, True) for a, b in keys], "complete")
    names = _catalog_names(P, {k: i for i, k in enumerate(keys)})
    assert names[0][0] == "Mermin" and names[1][0] == "Mermin"  # the setting-swapped version too
    assert "Mermin" in names[0][1] and "1838" in names[0][1]
    assert names.get(2, ("",))[0] != "Mermin"


@pytest.mark.slow
def test_mermin_class_of_the_three_party_set_with_renamed_parties(tmp_path):
    # Śliwa 2003: 53,856 facets in 46 classes; the Mermin class has 16 members (Mermin 1990).
    from nogo.facets import facets
    from nogo.theory import load_theory

    th = load_theory(_renamed("bell-3x2.yaml", {"A": "Ann", "B": "Bo", "C": "Cy"}, tmp_path / "r.yaml"))
    r = facets(th, "Bell-local", cache=False)
    assert len(r.facets) == 53856 and len(r.classes) == 46
    sizes = {c.name: c.size for c in r.classes}
    assert sizes["Mermin"] == 16 and sizes["positivity-3"] == 64


def test_catalog_entry_read_by_position_is_the_hand_written_inequality(tmp_path):
    # the stages of read_entry: parties by position, settings and outcomes by label, text carried over
    from nogo.catalog import resolve_inequality
    from nogo.errors import InputError
    from nogo.inequality import parse_inequality
    from nogo.theory import load_theory

    th = load_theory(_renamed("bell-3x2.yaml", {"A": "Ann", "B": "Bo", "C": "Cy"}, tmp_path / "r.yaml"))
    sc = th.scenario
    got = resolve_inequality(sc, "Mermin")
    want = parse_inequality(sc, "<Ann1 Bo1 Cy1> - <Ann1 Bo2 Cy2> - <Ann2 Bo1 Cy2> - <Ann2 Bo2 Cy1> <= 2")
    assert got.same_as(want) and "matched by position" in got.origin
    swapped = resolve_inequality(sc, "Mermin", match="A=Bo,B=Ann,C=Cy")
    assert swapped.same_as(want)  # Mermin's expression is symmetric under exchanging parties
    flipped = resolve_inequality(sc, "Mermin", match="+1=-1,-1=+1")  # every outcome flipped: sign of odd terms
    assert flipped.same_as(parse_inequality(
        sc, "-<Ann1 Bo1 Cy1> + <Ann1 Bo2 Cy2> + <Ann2 Bo1 Cy2> + <Ann2 Bo2 Cy1> <= 2"))
    with pytest.raises(InputError, match="neither an entry party"):
        resolve_inequality(sc, "Mermin", match="D=-1")
