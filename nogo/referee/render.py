"""Reports: terminal table, JSON, Markdown, LaTeX (a section to paste), one self-contained HTML page."""

from __future__ import annotations

import html
from typing import Any

from .claims import WORDS, ClaimsFile
from .evidence import Verdict


def _rows(cf: ClaimsFile, verdicts: list[Verdict]):
    by = {c.id: c for c in cf.claims}
    for v in verdicts:
        yield by[v.claim_id], v


def to_dict(cf: ClaimsFile, verdicts: list[Verdict], seconds: float) -> dict[str, Any]:
    return {"claims_file": cf.path, "title": cf.title, "seconds": round(seconds, 3),
            "counts": counts(verdicts),
            "claims": [{"id": c.id, "where": c.where_text, "says": c.says, "kind": c.kind, "verdict": v.status,
                        "summary": v.summary, "account": v.account, "notation": v.notation,
                        "details": {k: x for k, x in v.details.items() if k != "proof"},
                        "seconds": round(v.seconds, 3)} for c, v in _rows(cf, verdicts)]}


def counts(verdicts: list[Verdict]) -> dict[str, int]:
    out: dict[str, int] = {}
    for v in verdicts:
        out[v.status] = out.get(v.status, 0) + 1
    return out


def table(cf: ClaimsFile, verdicts: list[Verdict]) -> str:
    """Plain-text summary table for the terminal (rich when available)."""
    try:
        from io import StringIO

        from rich.console import Console
        from rich.table import Table
    except ImportError:  # pragma: no cover - rich is a dependency
        lines = [f"{v.claim_id:<10} {v.status:<12} {v.summary}" for v in verdicts]
        return "\n".join(lines)
    t = Table(title=cf.title or cf.path, show_lines=False)
    for h in ("claim", "where", "kind", "verdict", "what was shown"):
        t.add_column(h, overflow="fold")
    style = {"CONFIRMED": "green", "REFUTED": "red", "NOT DECIDED": "yellow", "ILL-POSED": "magenta"}
    for c, v in _rows(cf, verdicts):
        t.add_row(c.id, c.where_text, WORDS[c.kind], f"[{style[v.status]}]{v.status}[/]", v.summary)
    buf = StringIO()
    Console(file=buf, width=140, force_terminal=False, color_system=None).print(t)
    n = counts(verdicts)
    buf.write(", ".join(f"{k} {x}" for k, x in n.items()) + "\n")
    return buf.getvalue()


def _md_escape(s: str) -> str:
    return s.replace("|", "\\|")


def to_markdown(cf: ClaimsFile, verdicts: list[Verdict]) -> str:
    out = [f"# Referee report: {cf.title or cf.path}", ""]
    if cf.says:
        out += [cf.says.strip(), ""]
    n = counts(verdicts)
    out += ["Verdicts: " + ", ".join(f"{k} {x}" for k, x in n.items()) +
            ". Every verdict rests on exact evidence (rational certificates, rational points, interval enclosures); "
            "the evidence bundle re-checks with `nogo recheck`.", ""]
    out += ["| claim | where | kind | verdict | what was shown |", "|---|---|---|---|---|"]
    for c, v in _rows(cf, verdicts):
        out.append(f"| {c.id} | {_md_escape(c.where_text)} | {WORDS[c.kind]} | **{v.status}** | {_md_escape(v.summary)} |")
    out.append("")
    for c, v in _rows(cf, verdicts):
        out += [f"## {c.id}: {v.status}", ""]
        if c.where_text or c.says:
            out += [f"*{c.where_text}*" + (f" — “{c.says}”" if c.says else ""), ""]
        if v.notation:
            out += ["```", v.notation, "```", ""]
        out += [v.account, ""]
        if "proof_markdown" in v.details:
            out += ["<details><summary>proof steps</summary>", "", v.details["proof_markdown"].strip(), "",
                    "</details>", ""]
    return "\n".join(out)


_TEX = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#", "_": r"\_", "{": r"\{",
        "}": r"\}", "~": r"\textasciitilde{}", "^": r"\textasciicircum{}", "<": r"$<$", ">": r"$>$",
        "⊂": r"$\subset$", "≤": r"$\le$", "≥": r"$\ge$", "√": r"$\surd$", "·": r"$\cdot$", "±": r"$\pm$",
        "“": "``", "”": "''", "—": "---", "–": "--", "ᵀ": r"$^T$", "⟨": r"$\langle$", "⟩": r"$\rangle$"}


def tex(s: str) -> str:
    return "".join(_TEX.get(ch, ch) for ch in s)


def _tex_inequality(s: str) -> str:
    """The trade's notation as LaTeX math: <A1 B1> -> \\langle A_1 B_1\\rangle, p(..|..) kept."""
    import re

    s = re.sub(r"<([A-Za-z]+\d+(?: [A-Za-z]+\d+)*)>",
               lambda m: r"\langle " + " ".join(re.sub(r"([A-Za-z]+)(\d+)", r"\1_{\2}", t)
                                               for t in m.group(1).split()) + r"\rangle ", s)
    s = s.replace("<=", r"\le ").replace(">=", r"\ge ").replace("_", r"_").replace("|", r"\,|\,")
    return s


def to_latex(cf: ClaimsFile, verdicts: list[Verdict]) -> str:
    out = [r"\section*{Verification of the manuscript's claims}",
           tex(f"Claims file: {cf.title or cf.path}. Each verdict below rests on exact evidence "
               "(rational Farkas certificates, rational points of the compiled models, interval enclosures of "
               "quantum values), bundled so that it can be re-checked without any solver."), "",
           r"\begin{description}"]
    for c, v in _rows(cf, verdicts):
        head = tex(f"{c.id} ({c.where_text})" if c.where_text else c.id)
        out.append(rf"\item[{head}] \textbf{{{v.status}}}. " + (tex(f"“{c.says}”") + " " if c.says else ""))
        if v.notation and any(t in v.notation for t in ("<=", ">=")) and len(v.notation) < 300:
            out.append(r"\[ " + _tex_inequality(v.notation) + r" \]")
        elif v.notation:
            out.append(r"\texttt{" + tex(v.notation[:300]) + "}")
        out.append(tex(v.account))
        out.append("")
    out.append(r"\end{description}")
    return "\n".join(out) + "\n"


_CSS = """body{font-family:system-ui,sans-serif;max-width:60em;margin:2em auto;padding:0 1em;color:#222}
table{border-collapse:collapse;width:100%}td,th{border:1px solid #ccc;padding:.3em .5em;text-align:left;vertical-align:top}
.CONFIRMED{color:#176b1c;font-weight:bold}.REFUTED{color:#a31515;font-weight:bold}
.NOT-DECIDED{color:#8a6d00;font-weight:bold}.ILL-POSED{color:#7a1f7a;font-weight:bold}
pre{background:#f6f6f6;padding:.5em;overflow-x:auto}section{margin-top:1.5em}"""


def to_html(cf: ClaimsFile, verdicts: list[Verdict]) -> str:
    e = html.escape
    n = counts(verdicts)
    out = ["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
           f"<title>Referee report: {e(cf.title or cf.path)}</title>", f"<style>{_CSS}</style></head><body>",
           f"<h1>Referee report: {e(cf.title or cf.path)}</h1>"]
    if cf.says:
        out.append(f"<p>{e(cf.says.strip())}</p>")
    out.append(f'<p id="counts">{e(", ".join(f"{k} {x}" for k, x in n.items()))}</p>')
    out.append('<table id="summary"><tr><th>claim</th><th>where</th><th>kind</th><th>verdict</th><th>what was shown</th></tr>')
    for c, v in _rows(cf, verdicts):
        cls = v.status.replace(" ", "-")
        out.append(f'<tr><td><a href="#claim-{e(c.id)}">{e(c.id)}</a></td><td>{e(c.where_text)}</td>'
                   f'<td>{e(WORDS[c.kind])}</td><td class="{cls}">{e(v.status)}</td><td>{e(v.summary)}</td></tr>')
    out.append("</table>")
    for c, v in _rows(cf, verdicts):
        cls = v.status.replace(" ", "-")
        out.append(f'<section id="claim-{e(c.id)}"><h2>{e(c.id)}: <span class="{cls}">{e(v.status)}</span></h2>')
        if c.where_text or c.says:
            out.append(f"<p><em>{e(c.where_text)}</em>" + (f" — “{e(c.says)}”" if c.says else "") + "</p>")
        if v.notation:
            out.append(f"<pre>{e(v.notation)}</pre>")
        out.append(f"<p>{e(v.account)}</p></section>")
    out.append("</body></html>")
    return "\n".join(out) + "\n"


def _relative(cf: ClaimsFile, text: str) -> str:
    """Paths of declaration files shown relative to the claims file, so a report reads the same anywhere."""
    import os
    from pathlib import Path

    base = str(Path(cf.path).resolve().parent) + os.sep
    return text.replace(base, "")


def render(fmt: str, cf: ClaimsFile, verdicts: list[Verdict]) -> str:
    return _relative(cf, {"md": to_markdown, "tex": to_latex, "html": to_html}[fmt](cf, verdicts))
