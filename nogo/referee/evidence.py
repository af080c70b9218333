"""Verdicts and the evidence bundle.

A :class:`Verdict` is what the referee command prints for one claim; its
``checks`` are plain-data records (JSON-ready: every number an exact
fraction written "p/q") that :mod:`nogo.referee.checker` re-verifies:

* ``bound``: Farkas multipliers of a model's rows showing c·p <= β on the set;
* ``exceeds``: an exact point of a model whose behaviour has c·p > β;
* ``inside``: exact points of a model whose behaviours are the listed ones;
* ``facets``: a vertex list with preimages, facets with multipliers and tight vertices;
* ``quantum``: rational interval enclosures of a Born-rule behaviour, the
  inequality's value interval and the claimed relation;
* ``visibility``: a separating inequality (a ``bound``) with the state's and
  the noise's behaviour, and membership endpoints (``inside``);
* ``trusted``: a step the checker cannot redo (it says so and why).

A model record names the theory copy and the assumption names, and carries
the compiled rows with their source map (assumption, clause, events, the row
in words) and the column keys.  The checker rebuilds the rows itself and
accepts an evidence row only when it follows from its own rows.

:func:`write_bundle` writes one JSON file per claim, copies of every theory,
pattern, experiment and catalog file used, and ``manifest.json`` with the
SHA-256 of every file and of the bundle (the hash of the sorted list of
"name hash" lines).
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path
from typing import Any

FORMAT = "nogo-evidence/1"
STATUSES = ("CONFIRMED", "REFUTED", "NOT DECIDED", "ILL-POSED")


@dataclass
class Verdict:
    claim_id: str
    kind: str
    status: str  # one of STATUSES
    summary: str  # one line
    account: str  # one paragraph: what was computed and what shows it
    notation: str = ""  # the inequality (or object) in the trade's notation
    details: dict[str, Any] = field(default_factory=dict)  # numbers for JSON
    checks: list[dict[str, Any]] = field(default_factory=list)
    models: dict[str, dict[str, Any]] = field(default_factory=dict)
    files: dict[str, str] = field(default_factory=dict)  # role -> absolute path of a declaration used
    seconds: float = 0.0


def q(x) -> str:
    """An exact number as text."""
    return str(Fraction(x))


def ineq_record(ineq) -> dict[str, Any]:
    return {"coeffs": [[list(s), list(a), q(v)] for (s, a), v in sorted(ineq.coeffs.items()) if v],
            "bound": q(ineq.bound), "text": ineq.display() if hasattr(ineq, "display") else str(ineq.text),
            "name": ineq.name or ""}


def model_record(model, theory_path: str, names: list[str]) -> dict[str, Any]:
    """Rows, right-hand sides, source map and column keys of a compiled model."""
    rec: dict[str, Any] = {"theory": theory_path, "assumptions": list(names), "label": model.label,
                           "kind": model.kind, "shape": list(model.shape)}
    if model.kind == "linear":
        ev = model.columns[0].events if model.columns else ()
        rec["events"] = list(ev)
        rec["columns"] = [[list(c.settings), list(c.values)] for c in model.columns]
    else:
        rec["columns"] = [c.describe(model.scenario) for c in model.columns]
        rec["observe"] = [[[i, q(w)] for i, w in sorted(o.items())] for o in model.observe]
    rec["rows"] = [{"coeffs": [[j, q(v)] for j, v in sorted(r.items())], "rhs": q(b),
                    "source": {"assumption": s.assumption, "kind": s.kind, "clause": s.clause,
                               "events": list(s.events), "row": s.detail}}
                   for r, b, s in zip(model.rows, model.rhs, model.sources)]
    return rec


def sparse(vec) -> list[list]:
    return [[j, q(x)] for j, x in enumerate(vec) if x]


def sha256_bytes(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def bundle_hash(files: dict[str, str]) -> str:
    text = "".join(f"{name} {h}\n" for name, h in sorted(files.items()))
    return sha256_bytes(text.encode())


def _safe(cid: str) -> str:
    return "".join(ch if ch.isalnum() or ch in "-_." else "_" for ch in cid)


def write_bundle(folder: str | Path, claims_path: str, verdicts: list[Verdict], claims_meta: dict) -> dict:
    """Write the evidence bundle; returns the manifest."""
    from ..atomic import write_bytes, write_text

    out = Path(folder)
    (out / "files").mkdir(parents=True, exist_ok=True)
    hashes: dict[str, str] = {}
    copies: dict[str, str] = {}  # absolute source path -> name inside the bundle

    def copy(path: str) -> str:
        if path in copies:
            return copies[path]
        data = Path(path).read_bytes()
        h = sha256_bytes(data)
        name = f"files/{h[:16]}-{Path(path).name}"
        write_bytes(out / name, data)
        hashes[name] = h
        copies[path] = name
        return name

    claims_copy = copy(str(Path(claims_path).resolve()))
    listing = []
    for v in verdicts:
        files = {role: copy(p) for role, p in v.files.items()}
        models = {}
        for mid, m in v.models.items():
            m = dict(m)
            m["theory"] = copy(m["theory"])
            models[mid] = m
        doc = {"format": FORMAT, "claim": {"id": v.claim_id, "kind": v.kind, **claims_meta.get(v.claim_id, {})},
               "verdict": v.status, "summary": v.summary, "account": v.account, "notation": v.notation,
               "details": v.details, "files": files, "models": models, "checks": v.checks}
        name = f"claim-{_safe(v.claim_id)}.json"
        data = json.dumps(doc, indent=1, ensure_ascii=False).encode()
        write_bytes(out / name, data)
        hashes[name] = sha256_bytes(data)
        listing.append({"id": v.claim_id, "file": name, "verdict": v.status})
    manifest = {"format": FORMAT, "claims_file": claims_copy, "claims": listing, "files": hashes,
                "bundle_sha256": bundle_hash(hashes)}
    write_text(out / "manifest.json", json.dumps(manifest, indent=1, ensure_ascii=False) + "\n")
    return manifest
