"""Proofs in words: Markdown (also the terminal text) and LaTeX.

Notation (the trade's): p(a b c | x y z) is the observed probability of
outcomes a, b, c at settings x, y, z; q(… | x y z) is the joint of all
present events (outer outcomes, inner records, counterfactual outcomes) in
runs with those settings; "= 0" is "never occurs", "> 0" "sometimes".
"""

from __future__ import annotations

import re

from .proof import Proof, Step

_MAX_CASES = 16


def _tup(xs) -> str:
    return ", ".join(xs)


def _cube(cube, tex: bool = False) -> str:
    if tex:
        return ", ".join(f"{_tex_name(k)}{{=}}{_tex_val(v)}" for k, v in cube)
    return ", ".join(f"{k}={v}" for k, v in cube)


def _tex_name(n: str) -> str:
    if "@" in n:
        p, x = n.split("@", 1)
        return f"{p}^{{({x})}}"
    if "_" in n:
        p, rest = n.split("_", 1)
        return f"{p}_{{\\mathrm{{{rest}}}}}"
    return n


def _tex_val(v: str) -> str:
    return v.replace("-", "{-}").replace("+", "{+}")


def _settings_label(proof: Proof) -> str:
    return f"({_tup(proof.parties)})"


def _case_lines(step: Step, skip: set[str], tex: bool) -> list[str]:
    if not step.cases:
        return []
    if len(step.cases) > _MAX_CASES:
        return [f"{len(step.cases)} cases, each excluded by one of steps {_tup(str(u) for u in step.uses)}"]
    lines = []
    for values, k in step.cases:
        shown = tuple((n, v) for n, v in values if n not in skip)
        lines.append(f"{_cube(shown, tex) if shown else '(the only case)'}: step {k}")
    return lines


def _transfer_cases(step: Step) -> str:
    """The case check of a transfer step, showing only the values a statement leaves open."""
    by_step: dict[int, int] = {}
    for _, k in step.cases:
        by_step[k] = by_step.get(k, 0) + 1
    if len(by_step) == 1:
        (k, n), = by_step.items()
        return f"all {n} excluded by step {k}"
    fixed = {k for x in step.statements for k, _ in x.cube}
    if len(step.cases) > _MAX_CASES:
        return "; ".join(f"{n} by step {k}" for k, n in sorted(by_step.items()))
    return "; ".join(f"{_cube(tuple((n, v) for n, v in values if n not in fixed))}: step {k}"
                     for values, k in step.cases)


def to_markdown(proof: Proof, says: dict[str, str] | None = None) -> str:
    """The proof as Markdown: numbered steps, each naming what it uses."""
    says = says or {}
    P = _settings_label(proof)
    out = [f"### Possibilistic contradiction under `{proof.bundle}`", ""]
    if proof.theory:
        out.append(f"Theory: `{proof.theory}`. Pattern: {proof.pattern or '(untitled)'} "
                   f"(impossible events: {proof.zero_test}).")
    out.append(f"Assumptions used: {', '.join(proof.assumptions_used) or 'none'}; "
               f"observed facts used: {proof.facts_used}.")
    out.append(f"Settings and outcomes are listed in party order {P}. "
               f"q(… | settings) is the joint of the events {_tup(proof.events)} in runs with those settings.")
    if proof.read_outs:
        out.append("Read-out rules: " + "; ".join(proof.read_outs) + ".")
    if proof.smallest:
        sm = proof.smallest
        what = sm.get("counts", "facts and assumption instances")
        scope = "" if sm.get("scope") in (None, "whole model") else f" among proofs on {sm['scope']}"
        if sm.get("proven"):
            out.append(f"This proof uses {sm['size']} {what}, the fewest possible{scope}.")
        elif sm.get("searched", True):
            out.append(f"This proof uses {sm['size']} {what}; NOT proven smallest: the search stopped at its time "
                       f"limit, and no proof with fewer than {sm.get('lower_bound')} exists{scope}.")
        else:
            out.append(f"This proof uses {sm['size']} {what}, a minimal set "
                       f"(no smaller proof was searched for).")
    out.append("")
    party_set = set(proof.parties)
    for st in proof.steps:
        s = _tup(st.settings)
        if st.kind == "observed":
            evs = ", ".join(f"p({_tup(v for _, v in x.cube)} | {s}) = 0" for x in st.statements)
            out.append(f"{st.number}. **Observed** (the pattern): in runs with settings {P} = ({s}) "
                       f"these outcomes never occur: {evs}.")
        elif st.kind == "transfer":
            f = _tup(st.from_settings)
            words = says.get(st.assumption) or st.says
            w = f" ({words})" if words else ""
            out.append(f"{st.number}. **By `{st.assumption}`**{w}, comparing settings ({f}) with ({s}): "
                       f"at ({f}) every run with the values below is excluded by step(s) "
                       f"{_tup(str(u) for u in st.uses)}; the marginal of these events cannot depend on the "
                       f"settings that changed, so they are excluded at ({s}) too:")
            for x in st.statements:
                out.append(f"   - q({_cube(x.cube)} | {s}) = 0")
            out.append(f"   - the runs checked at ({f}): " + _transfer_cases(st))
        else:
            if st.outcomes:
                head = (f"the pattern says p({_tup(st.outcomes)} | {s}) > 0, but every joint assignment at "
                        f"({s}) that shows these outcomes is excluded")
            else:
                head = f"some outcome occurs in every run, but every joint assignment at ({s}) is excluded"
            out.append(f"{st.number}. **Contradiction**: {head}:")
            for line in _case_lines(st, party_set if st.outcomes else set(), False):
                out.append(f"   - {line}")
            out.append("")
            out.append("So the pattern is impossible under these assumptions. ∎")
    return "\n".join(out)


def to_latex(proof: Proof, says: dict[str, str] | None = None) -> str:
    """The proof as a LaTeX fragment (an ``enumerate`` list; needs amsmath)."""
    says = says or {}
    P = _tup(proof.parties)

    def sset(t):
        return ",".join(t)

    used = ", ".join("\\texttt{" + a.replace("_", "\\_") + "}" for a in proof.assumptions_used)
    out = [f"% possibilistic contradiction under {proof.bundle}; theory {proof.theory}",
           f"\\paragraph{{Claim.}} Under the assumptions {used} "
           f"the support pattern {proof.pattern} is impossible. "
           f"Settings and outcomes are in party order $({P})$; $q(\\cdot\\mid x)$ is the joint of "
           f"${', '.join(_tex_name(e) for e in proof.events)}$ in runs with settings $x$."]
    if proof.read_outs:
        rules = [re.sub(r"[A-Za-z]\w*(?:@\w+|_\w+)", lambda m: f"${_tex_name(m.group(0))}$", r) for r in proof.read_outs]
        out.append("Read-out rules: " + "; ".join(rules) + ".")
    if proof.smallest and not proof.smallest.get("proven", True):
        out.append("(Not proven to be the shortest proof: the search stopped at its time limit.)")
    out.append("\\begin{enumerate}")
    party_set = set(proof.parties)
    for st in proof.steps:
        s = sset(st.settings)
        if st.kind == "observed":
            evs = ",\\ ".join(f"p({sset(_tex_val(v) for _, v in x.cube)}\\mid {s})=0" for x in st.statements)
            out.append(f"\\item \\textbf{{Observed.}} ${evs}$.")
        elif st.kind == "transfer":
            f = sset(st.from_settings)
            name = st.assumption.replace("_", "\\_")
            stm = ",\\ ".join(f"q({_cube(x.cube, True)}\\mid {s})=0" for x in st.statements)
            out.append(f"\\item \\textbf{{By \\texttt{{{name}}}}}, from settings $({f})$ to $({s})$ "
                       f"(at $({f})$ every such run is excluded by step(s) {', '.join(str(u) for u in st.uses)}): "
                       f"${stm}$.")
        else:
            if st.outcomes:
                head = (f"$p({sset(_tex_val(v) for v in st.outcomes)}\\mid {s})>0$, yet every joint assignment "
                        f"showing these outcomes is excluded")
            else:
                head = f"some outcome occurs in every run, yet every joint assignment at $({s})$ is excluded"
            lines = _case_lines(st, party_set if st.outcomes else set(), True)
            body = "; ".join(f"${ln.split(': step')[0]}$: step{ln.split(': step')[1]}" if ": step" in ln else ln
                             for ln in lines)
            out.append(f"\\item \\textbf{{Contradiction.}} {head}: {body}. \\qed")
    out.append("\\end{enumerate}")
    return "\n".join(out)
