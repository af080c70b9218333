"""Referee benchmark: the example claims file decided with evidence, against the same questions by hand.

By hand = what a user would write without ``nogo referee``: one call per claim to the stage functions
(``decide`` for implications, ``check_claim`` for minimality, ``facets`` for facet claims,
``evaluate``/``robustness``/``npa_bound`` for quantum claims, ``decide_pattern`` for patterns), with no
evidence bundle.  Also: the independent checker on the bundle, against deciding again.

    python benchmarks/bench_referee.py

Targets (issue 11): the example decided in under 30 s, the checker on its evidence in under 5 s.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))
CLAIMS = ROOT / "examples" / "claims" / "sealed-aviaries-claims.yaml"


def by_hand() -> float:
    from nogo.catalog import resolve_inequality
    from nogo.check import decide
    from nogo.compile import compile_bundle
    from nogo.facets import facets
    from nogo.minimal import check_claim
    from nogo.possibilistic import decide_pattern, load_pattern
    from nogo.quantum.certify import evaluate
    from nogo.quantum.experiment import load_experiment
    from nogo.quantum.npa import npa_bound
    from nogo.quantum.visibility import robustness
    from nogo.symmetry import orbit
    from nogo.theory import load_theory

    t0 = time.perf_counter()
    d = ROOT / "examples" / "claims"
    th = load_theory(d / "aviaries.yaml")
    sc = th.scenario
    lf = compile_bundle(th, "sealed-aviaries")
    chsh = resolve_inequality(sc, "CHSH")
    for t in orbit(chsh):
        decide(lf, t)
    decide(lf, resolve_inequality(sc, "<A2 B2> + <A2 B3> + <A3 B2> - <A3 B3> <= 2"))
    decide(lf, resolve_inequality(sc, "<A1 B1> + <A1 B2> + <A2 B1> - <A2 B2> <= 19/10"))
    check_claim(th, chsh, ["notes-are-real", "wren-free", "kestrel-free"])
    check_claim(th, chsh, ["notes-are-real", "wren-free", "kestrel-free", "notes-free"])
    decide(compile_bundle(th, ["notes-are-real", "wren-free", "kestrel-free"]), chsh)
    r = facets(th, "sealed-aviaries", cache=False)
    r.facet_of(chsh)
    pat = load_pattern(d / "aviaries-hardy.yaml", sc)
    decide_pattern(th, "sealed-aviaries", pat)
    exp = load_experiment(d / "aviaries-photons.yaml")
    evaluate(exp, [chsh])
    robustness(lf, exp)
    npa_bound(chsh, "1")
    return time.perf_counter() - t0


def main() -> None:
    from nogo.referee.evidence import write_bundle
    from nogo.referee.run import claims_meta, referee
    from nogo.referee.verify import verify_bundle

    t_hand = by_hand()
    t0 = time.perf_counter()
    cf, verdicts, _ = referee(CLAIMS)
    t_decide = time.perf_counter() - t0
    with tempfile.TemporaryDirectory() as tmp:
        t1 = time.perf_counter()
        write_bundle(tmp, str(CLAIMS), verdicts, claims_meta(cf))
        t_write = time.perf_counter() - t1
        size = sum(p.stat().st_size for p in Path(tmp).rglob("*") if p.is_file())
        t2 = time.perf_counter()
        rep = verify_bundle(tmp)
        t_check = time.perf_counter() - t2
    print(f"claims                 {len(verdicts)} ({', '.join(sorted({v.status for v in verdicts}))})")
    print(f"by hand (no evidence)  {t_hand:7.2f} s")
    print(f"nogo referee           {t_decide:7.2f} s   ratio {t_decide / t_hand:5.2f}x   (target: < 30 s)")
    print(f"evidence bundle        {t_write:7.2f} s   {size / 1e6:.1f} MB")
    print(f"independent checker    {t_check:7.2f} s   ratio {t_check / t_decide:5.2f}x of deciding   "
          f"(target: < 5 s; {'all evidence holds' if rep.ok else 'PROBLEMS'})")
    slow = sorted(verdicts, key=lambda v: -v.seconds)[:3]
    print("slowest claims         " + ", ".join(f"{v.claim_id} {v.seconds:.1f} s" for v in slow))


if __name__ == "__main__":
    main()
