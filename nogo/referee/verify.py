"""Re-verifying each claim's evidence file (the checks of :mod:`nogo.referee.checker`, claim by claim)."""

from __future__ import annotations

import json
from fractions import Fraction
from pathlib import Path

from .checker import (Broken, BundleReport, ClaimReport, Model, _above, _claimed_interval, _coord_vector, _coords,
                      _manifest, _quantum_value, _value_interval, _within, affine_rank, behaviour_of, farkas,
                      load_model, point_ok, rank)
from .rows import NotRebuilt

F = Fraction


class _Claim:
    def __init__(self, folder: Path, doc: dict, theories: dict):
        self.folder, self.doc, self.theories = folder, doc, theories
        self.models: dict[str, Model | str] = {}
        self.proven: list[tuple[str, dict, Fraction]] = []  # (role, inequality, proven bound)
        self.exceeding: list[tuple[str, dict, Fraction, list]] = []  # (role, inequality, value, behaviour)
        self.inside: dict[str, list[list[Fraction]]] = {}  # role -> behaviours shown inside
        self.facts_file = doc.get("files", {}).get("pattern")

    def model(self, mid: str) -> Model:
        m = self.models.get(mid)
        if m is None:
            rec = self.doc["models"].get(mid)
            if rec is None:
                raise Broken(f"the evidence refers to model {mid}, which it does not contain")
            # identical model records (several claims on one bundle) are rebuilt and compared once
            key = ("model", json.dumps(rec, sort_keys=True), self.facts_file)
            memo = self.theories.setdefault("_memo", {})
            if key not in memo:
                try:
                    memo[key] = load_model(self.folder, rec, self.theories, self.facts_file)
                except NotRebuilt as exc:
                    memo[key] = str(exc)
            m = memo[key]
            self.models[mid] = m
        if isinstance(m, str):
            raise NotRebuilt(m)
        return m


def _bound(cl: _Claim, ch: dict) -> str:
    m = cl.model(ch["model"])
    b = farkas(m, ch["inequality"], ch["multipliers"])
    if b > F(ch["inequality"]["bound"]):
        raise Broken(f"the multipliers prove only {b}, weaker than the bound {ch['inequality']['bound']}")
    cl.proven.append((ch["role"], ch["inequality"], b))
    return f"Farkas bound {b} on {ch['inequality']['text'][:60]}"


def _exceeds(cl: _Claim, ch: dict) -> str:
    m = cl.model(ch["model"])
    x = point_ok(m, ch["point"])
    c = _coord_vector(ch["inequality"], _coords(m.own))
    beh = behaviour_of(m, x)
    val = sum((a * b for a, b in zip(c, beh)), F(0))
    if val != F(ch["value"]):
        raise Broken(f"the point's value is {val}, not the {ch['value']} recorded")
    if val <= F(ch["inequality"]["bound"]):
        raise Broken(f"the point reaches only {val}, not above the bound {ch['inequality']['bound']}")
    cl.exceeding.append((ch["role"], ch["inequality"], val, beh))
    return f"exact point reaching {val} > {ch['inequality']['bound']}"


def _inside(cl: _Claim, ch: dict) -> str:
    m = cl.model(ch["model"])
    shown = []
    for i, item in enumerate(ch["points"]):
        x = point_ok(m, item["preimage"])
        beh = behaviour_of(m, x)
        want = [F(v) for v in item["behaviour"]]
        if beh != want:
            raise Broken(f"point {i}: its preimage produces another behaviour")
        shown.append(want)
    cl.inside.setdefault(ch["role"], []).extend(shown)
    return f"{len(shown)} behaviours with exact preimages"


def _equations(cl: _Claim) -> list[list[Fraction]]:
    """Hull equations proven both ways (h·p <= v and -h·p <= -v) as coefficient vectors."""
    eqs = [(q, F(b)) for role, q, b in cl.proven if role == "hull equation"]
    keys = {}
    for q, b in eqs:
        v = tuple(sorted((tuple(s), tuple(a), F(x)) for s, a, x in q["coeffs"]))
        keys[v] = keys.get(v, set()) | {F(q["bound"]) == b}
    out, done = [], set()
    for q, b in eqs:
        v = tuple(sorted((tuple(s), tuple(a), F(x)) for s, a, x in q["coeffs"]))
        neg = tuple(sorted((s, a, -x) for s, a, x in v))
        if neg in keys and v not in done and neg not in done:
            out.append(q)
            done.add(v)
    return out


def _dimension(cl: _Claim, m: Model, points: list[list[Fraction]], claimed: int) -> None:
    coords = _coords(m.own)
    eqs = _equations(cl)
    upper = len(coords) - rank([_coord_vector(q, coords) for q in eqs])
    lower = affine_rank(points)
    if not (lower == upper == claimed):
        raise Broken(f"dimension: the points span {lower}, the certified equations allow {upper}, "
                     f"the evidence says {claimed}")


def _face(cl: _Claim, ch: dict) -> str:
    m = cl.model(ch["model"])
    pts = cl.inside.get("spanning points", [])
    d = int(ch["dimension"])
    _dimension(cl, m, pts, d)
    c = _coord_vector(ch["inequality"], _coords(m.own))
    b = F(ch["inequality"]["bound"])
    if not any(role == "claim" and q["coeffs"] == ch["inequality"]["coeffs"] and p <= b for role, q, p in cl.proven):
        raise Broken("the face's inequality is not certified valid")
    vals = [sum((x * y for x, y in zip(c, p)), F(0)) for p in pts]
    tight = [p for p, v in zip(pts, vals) if v == b]
    if any(v > b for v in vals):
        raise Broken("a point of the set breaks the face's inequality")
    if len(tight) == len(pts):
        raise Broken("every listed point is tight: the inequality may hold with equality on the whole set")
    if affine_rank(tight) != d - 1:
        raise Broken(f"the tight points span dimension {affine_rank(tight)}, not {d - 1}")
    return f"facet: valid, set of dimension {d}, tight points spanning {d - 1}"


def _int_rows(vectors: list[list[Fraction]]) -> tuple[list[list[int]], int]:
    """The vectors over one common denominator, as Python integers."""
    from math import lcm

    den = 1
    for v in vectors:
        for x in v:
            den = lcm(den, x.denominator)
    return [[int(x * den) for x in v] for v in vectors], den


def _facets(cl: _Claim, ch: dict) -> str:
    """A facet list (memoised on its exact content: the same list in two claims is checked once)."""
    memo = cl.theories.setdefault("_memo", {})
    key = ("facets", json.dumps(ch, sort_keys=True), json.dumps(cl.doc["models"][ch["model"]], sort_keys=True),
           json.dumps(cl.inside.get("vertices", []), default=str),
           json.dumps([[r, q, str(b)] for r, q, b in cl.proven if r == "hull equation"], default=str))
    if key not in memo:
        memo[key] = _facets_unmemoised(cl, ch)
    return memo[key]


def _facets_unmemoised(cl: _Claim, ch: dict) -> str:
    import flint

    m = cl.model(ch["model"])
    verts = cl.inside.get("vertices", [])
    d = int(ch["dimension"])
    _dimension(cl, m, verts, d)
    coords = _coords(m.own)
    V, vden = _int_rows(verts)
    D = [[a - b for a, b in zip(row, V[0])] for row in V]  # differences to the first vertex
    VM = flint.fmpz_mat(V)
    seen = set()
    for k, f in enumerate(ch["facets"]):
        q = f["inequality"]
        b = farkas(m, q, f["multipliers"])
        if b > F(q["bound"]):
            raise Broken(f"facet {k}: the multipliers prove only {b}")
        (C,), cden = _int_rows([_coord_vector(q, coords) + [F(q["bound"])]])
        vals = VM * flint.fmpz_mat([[x] for x in C[:-1]])
        rhs = C[-1] * vden  # c·v <= bound  <=>  (cden c)·(vden v) <= cden bound vden
        tight = []
        for i in range(len(V)):
            x = int(vals[i, 0])
            if x > rhs:
                raise Broken(f"facet {k} is broken by vertex {i}")
            if x == rhs:
                tight.append(i)
        tight_set = frozenset(tight)
        if len(tight) == len(V):
            raise Broken(f"facet {k} is tight on every vertex")
        rows = [[a - b for a, b in zip(D[i], D[tight[0]])] for i in tight[1:]]
        r = flint.fmpz_mat(rows).rank() if rows else 0
        if r != d - 1:
            raise Broken(f"facet {k} ({q['text'][:50]}) is not tight on a facet's worth of vertices")
        if tight_set in seen:
            raise Broken(f"facet {k} repeats another facet")
        seen.add(tight_set)
    if len(seen) != int(ch["count"]):
        raise Broken(f"the evidence lists {len(seen)} facets but counts {ch['count']}")
    return f"{len(seen)} distinct facets, each valid and tight on {d} affinely independent vertices"


def _quantum(cl: _Claim, ch: dict) -> str:
    beh = ch["behaviour"]
    c = _coord_vector(ch["inequality"], [(tuple(s), tuple(a)) for s, a in beh["coordinates"]])
    val = _quantum_value(c, beh)
    bound = F(ch["inequality"]["bound"])
    if ch.get("violated") and not _above(val, bound):
        raise Broken(f"the value [{float(val['lo']):.10g}, {float(val['hi']):.10g}] is not above the bound {bound}")
    if "claimed" in ch:
        lo, hi, tol = _claimed_interval(ch["claimed"])
        ok = _within(val, lo - tol, hi + tol)
        if ok != (cl.doc["verdict"] == "CONFIRMED") and cl.doc["verdict"] in ("CONFIRMED", "REFUTED"):
            raise Broken("the value and the claimed value disagree with the verdict")
    if _above(val, bound):
        cl.exceeding.append((ch["role"] + " (quantum)", ch["inequality"], val["lo"], []))
    return f"quantum value in [{float(val['lo']):.12g}, {float(val['hi']):.12g}]"


def _visibility(cl: _Claim, ch: dict) -> str:
    beh = ch["behaviour"]
    coords = [(tuple(s), tuple(a)) for s, a in beh["coordinates"]]
    q = ch["inequality"]
    if not any(role == "separating" and p["coeffs"] == q["coeffs"] and b <= F(q["bound"])
               for role, p, b in cl.proven):
        raise Broken("the separating inequality is not certified valid on the set")
    c = _coord_vector(q, coords)
    noise = [F(x) for x in ch["noise"]]
    s_n = sum((a * b for a, b in zip(c, noise)), F(0))
    s_lo, _ = _value_interval(c, beh["intervals"])
    if s_lo <= s_n:
        raise Broken("the separating inequality does not separate the state from the noise")
    U = (F(q["bound"]) - s_n) / (s_lo - s_n)
    if F(ch["upper"]) < U:
        raise Broken(f"the recorded upper end {ch['upper']} is below what the inequality shows ({U})")
    L = None
    if ch.get("lower") is not None:
        L = F(ch["lower"])
        n = int(beh["sqrt"])
        seg = [x for x in cl.doc["checks"] if x.get("role") == "visibility lower end"]
        if not seg:
            raise Broken("the lower end has no membership evidence")
        s = seg[0]["segment"]
        s1, s2 = F(s["s"][0]), F(s["s"][1])
        if F(s["visibility"]) != L or int(s["sqrt"]) != n or not (n == 1 or (s1 * s1 < n < s2 * s2)):
            raise Broken("the segment around the lower end does not bracket the state's behaviour")
        ends = [[L * (F(r0) + t * F(r1)) + (1 - L) * pn for (r0, r1), pn in zip(beh["exact"], noise)]
                for t in (s1, s2)]
        if ends != cl.inside.get("visibility lower end", []):
            raise Broken("the membership points are not the ends of the segment")
    lo, hi, tol = _claimed_interval(ch["claimed"])
    confirmed = L is not None and L >= lo - tol and F(ch["upper"]) <= hi + tol
    if cl.doc["verdict"] == "CONFIRMED" and not confirmed:
        raise Broken("the bracket does not lie inside the claimed range")
    return f"{float(L) if L is not None else '?'} <= critical visibility <= {float(F(ch['upper'])):.10g}"


KINDS = {"bound": _bound, "exceeds": _exceeds, "inside": _inside, "face": _face, "facets": _facets,
         "quantum": _quantum, "visibility": _visibility}
ORDER = ["bound", "exceeds", "inside", "face", "facets", "quantum", "visibility"]


def _versions(cl: _Claim, which: str) -> set | None:
    """Canonical keys of the versions of the claim's inequality that the claim speaks of (re-derived here)."""
    from ..catalog import resolve_inequality
    from ..symmetry import orbit
    from ..theory import load_theory

    params = cl.doc["claim"].get("params", {})
    tfile = cl.doc.get("files", {}).get("theory")
    if tfile is None or "inequality" not in params:
        return None
    sc = load_theory(cl.folder / tfile).scenario
    ro = {(o.lab, x) for o in sc.inner for x, _ in o.read_outs}  # every read-out setting

    def uses(x):
        return any((p, st[i]) in ro for (st, _), c in x.coeffs.items() if c for i, p in enumerate(sc.party_names))
    out = orbit(resolve_inequality(sc, str(params["inequality"])))
    if which == "read-out":
        out = [x for x in out if uses(x)]
    elif which == "no-read-out":
        out = [x for x in out if not uses(x)]
    return {x.canonical() for x in out}


def _key_of(q: dict, cl: _Claim):
    from ..inequality import Inequality
    from ..theory import load_theory

    tfile = cl.doc.get("files", {}).get("theory")
    sc = cl.theories.setdefault(("scenario", tfile), load_theory(cl.folder / tfile).scenario)
    coeffs = {(tuple(st), tuple(a)): F(v) for st, a, v in q["coeffs"]}
    return Inequality(sc, coeffs, F(q["bound"])).canonical()


def _claim_inequality(cl: _Claim) -> dict | None:
    """The claim's inequality re-read from the claims file's words (catalog name or expression)."""
    from ..catalog import resolve_inequality
    from ..theory import load_theory

    params = cl.doc["claim"].get("params", {})
    text = params.get("inequality")
    tfile = cl.doc.get("files", {}).get("theory")
    if text is None or tfile is None:
        return None
    th = load_theory(cl.folder / tfile)
    ineq = resolve_inequality(th.scenario, str(text))
    return {"coeffs": sorted([list(s), list(a), str(v)] for (s, a), v in ineq.coeffs.items() if v),
            "bound": str(ineq.bound)}


def _conclusion(cl: _Claim, rep: ClaimReport) -> None:
    """The verdict must follow from the checks just redone (main kinds)."""
    kind, verdict = cl.doc["claim"]["kind"], cl.doc["verdict"]
    mine = _claim_inequality(cl)

    def same(q):
        return mine is None or (sorted(q["coeffs"]) == mine["coeffs"] and q["bound"] == mine["bound"])

    proven = [q for role, q, _ in cl.proven if role == "claim"]
    exceeded = [q for role, q, _, _ in cl.exceeding if role == "claim"]
    need = None
    versions = cl.doc["claim"].get("params", {}).get("versions", "one")
    if kind in ("implies", "does_not_imply") and verdict == "CONFIRMED" and versions != "one":
        want = _versions(cl, versions)
        got = {_key_of(q, cl) for q in (proven if kind == "implies" else exceeded)}
        need = want is not None and want <= got, (f"{len((want or set()) - got)} of the {len(want or ())} versions "
                                                  "have no evidence")
    elif kind in ("implies", "not_needed", "facet") and verdict == "CONFIRMED":
        need = any(same(q) for q in proven), "no certified bound for the claim's inequality"
    elif kind == "implies" and verdict == "REFUTED":
        need = bool([r for r, *_ in cl.exceeding]), "no counterexample"
    elif kind == "does_not_imply" and verdict == "CONFIRMED":
        need = any(same(q) for q in exceeded), "no counterexample to the claim's inequality"
    elif kind in ("contradiction", "contradiction_within") and verdict == "CONFIRMED":
        need = bool(proven) or bool(rep.trusted), "no certificate of the contradiction"
    elif kind == "minimal" and verdict == "CONFIRMED":
        drops = {r for r, *_ in cl.exceeding if r.startswith("without ")}
        need = (any(r == "whole" for r, _, _ in cl.proven) and
                len(drops) == len(cl.doc["details"].get("claimed", [])), "a drop without its counterexample")
    elif kind in ("violates", "outside") and verdict == "CONFIRMED":
        need = any(r == "claim (quantum)" for r, *_ in cl.exceeding), "no quantum value above the bound"
    elif kind == "critical_visibility" and verdict in ("CONFIRMED", "REFUTED"):
        need = any(x.startswith("visibility") for x in rep.checked), "no visibility bracket"
    elif kind in ("contained_in", "same_set") and verdict == "CONFIRMED":
        need = (any(r == "outer facet on inner" for r, _, _ in cl.proven) and "outer vertices" in cl.inside,
                "a containment without the outer set's facets certified on the inner set")
    elif (kind == "not_contained_in" and verdict == "CONFIRMED") or (kind == "contained_in" and verdict == "REFUTED"):
        broken = [q for r, q, _, _ in cl.exceeding if r == "a behaviour of the inner set breaks it"]
        valid = [q for r, q, _ in cl.proven if r == "valid on the outer set"]
        need = (any(x["coeffs"] == y["coeffs"] and x["bound"] == y["bound"] for x in broken for y in valid),
                "no behaviour of the inner set breaking an inequality valid on the outer set")
    if need is not None and not need[0]:
        rep.failures.append(f"the verdict {verdict} does not follow: {need[1]}")


def check_claim_file(folder: Path, name: str, theories: dict) -> ClaimReport:
    try:
        doc = json.loads((folder / name).read_text(encoding="utf-8"))
    except (OSError, ValueError) as exc:
        return ClaimReport(name, "?", failures=[f"cannot read {name}: {exc}"])
    cid = doc.get("claim", {}).get("id", name)
    rep = ClaimReport(cid, doc.get("verdict", "?"))
    cl = _Claim(folder, doc, theories)
    # the coordinates of quantum records: the scenario of the theory copy
    checks = sorted(enumerate(doc.get("checks", [])), key=lambda t: ORDER.index(t[1]["type"])
                    if t[1]["type"] in ORDER else len(ORDER))
    for i, ch in checks:
        t = ch.get("type")
        if t == "trusted":
            rep.trusted.append(f"{ch.get('what')} — {ch.get('why')}")
            continue
        if t in ("quantum", "visibility"):
            _attach_coords(cl, ch)
        try:
            rep.checked.append(f"{t} ({ch.get('role')}): " + KINDS[t](cl, ch))
        except NotRebuilt as exc:
            rep.uncovered.append(f"{t} ({ch.get('role')}): {exc}")
        except Broken as exc:
            rep.failures.append(f"check {i} ({t}, {ch.get('role')}): {exc}")
        except (KeyError, TypeError, ValueError, ZeroDivisionError) as exc:
            rep.failures.append(f"check {i} ({t}, {ch.get('role')}): malformed evidence ({type(exc).__name__}: {exc})")
    for mid in doc.get("models", {}):  # every model the evidence carries must follow from the declarations
        if mid not in cl.models:
            try:
                cl.model(mid)
            except NotRebuilt as exc:
                rep.uncovered.append(f"model {mid}: {exc}")
            except Broken as exc:
                rep.failures.append(f"model {mid}: {exc}")
    if not rep.failures:
        try:
            _conclusion(cl, rep)
        except Exception as exc:  # noqa: BLE001 - a bad file must not crash the checker
            rep.failures.append(f"the claim's inequality could not be re-read: {exc}")
    return rep


def _attach_coords(cl: _Claim, ch: dict) -> None:
    from ..theory import load_theory

    beh = ch["behaviour"]
    if "coordinates" in beh:
        return
    tfile = cl.doc.get("files", {}).get("theory")
    if tfile is None:
        raise Broken("a quantum check without the theory file of its scenario")
    sc = load_theory(cl.folder / tfile).scenario
    beh["coordinates"] = [[list(s), list(a)] for s, a in sc.coordinates()]
    if len(beh["coordinates"]) != len(beh["intervals"]):
        raise Broken("the behaviour has the wrong number of entries for the scenario")


def verify_bundle(folder: str | Path, only: list[str] | None = None) -> BundleReport:
    """Re-verify the bundle in *folder* (the manifest always; the claims in *only*, or all)."""
    folder = Path(folder)
    man, bad = _manifest(folder)
    theories: dict = {}
    reports = []
    for c in man.get("claims", []):
        if only is not None and c["id"] not in only:
            continue
        p = folder / c["file"]
        if not p.is_file():
            reports.append(ClaimReport(c["id"], c.get("verdict", "?"), failures=[f"evidence file {c['file']} is missing"]))
            continue
        r = check_claim_file(folder, c["file"], theories)
        if r.claim_id != c["id"] or r.verdict != c.get("verdict"):
            r.failures.append("the evidence file does not belong to this claim (id or verdict differs from the manifest)")
        reports.append(r)
    return BundleReport(str(folder), reports, bad)
