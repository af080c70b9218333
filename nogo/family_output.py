"""Families of scenarios: the table (Markdown, CSV) and the plot of a :class:`nogo.family.FamilyResult`.

Rendering only; every number comes from :mod:`nogo.family`.  Files are
written by the command through :mod:`nogo.atomic`.
"""

from __future__ import annotations

from .family import FamilyResult


#: the column that states the classification beside the computed answer
CRITERION = "criterion (arXiv:2407.20346; argument in README)"
NOTE = ("Column '" + CRITERION + "': M. Haddara and E. G. Cavalcanti, arXiv:2407.20346 (abstract, the only part of "
        "the paper in the stored copy read for this project; the theorem's wording and number were not available) "
        "identify every canonical local-friendliness scenario, with any finite numbers of superobservers, friends, "
        "measurements and outcomes, in which the local-friendliness set admits a local hidden-variable model. The "
        "column applies that classification in the form derived in results/families/README.md: under the published "
        "local agency local friendliness equals the partially deterministic set (outcomes fixed at the read-out "
        "settings; arXiv:2510.25127), and that set is Bell-local exactly when at most one lab has two or more "
        "settings that are not read out. 'n/a': the one-lab-at-a-time reading, outside the classification. nogo does "
        "not use the column; 'answer' is computed.")


def criterion(m) -> str:
    """What the classification says of a member (only for the lf-equals-bell question)."""
    if m.agency != "published" and m.labs > 2:
        return "n/a"
    free = [s - (m.sequence if f else 0) for s, f in zip(m.settings, m.friends)]
    return "equal" if sum(1 for x in free if x >= 2) <= 1 else "not equal"


def table_rows(fr: FamilyResult) -> list[list[str]]:
    crit = fr.question == "lf-equals-bell"
    head = ["member", "labs", "settings", "inner observers", "dimension", "hull estimate", "answer", "facets",
            "evidence", "seconds"] + ([CRITERION] if crit else [])
    rows = [head]
    for r in fr.results:
        m = r.member
        fac = ", ".join(f"{k} {v}" for k, v in r.facets.items())
        ev = r.witness["inequality"] if r.witness else ("; ".join(r.evidence) or "; ".join(r.notes))
        rows.append([m.key, str(m.labs), "/".join(map(str, m.settings)),
                     ",".join(p for p, f in zip(m.parties, m.friends) if f) or "none",
                     str(r.estimate["dimension"]), r.estimate["hull"].split(" (")[0], r.answer, fac, ev,
                     str(r.seconds)] + ([criterion(m)] if crit else []))
    return rows


def markdown_table(fr: FamilyResult) -> str:
    rows = table_rows(fr)
    out = ["| " + " | ".join(rows[0]) + " |", "|" + "---|" * len(rows[0])]
    out += ["| " + " | ".join(c.replace("|", "\\|") for c in r) + " |" for r in rows[1:]]
    if fr.question == "lf-equals-bell":
        out += ["", NOTE]
    return "\n".join(out) + "\n"


def csv_table(fr: FamilyResult) -> str:
    import csv
    import io

    buf = io.StringIO()
    csv.writer(buf).writerows(table_rows(fr))
    return buf.getvalue()


def plot(fr: FamilyResult, path: str) -> None:
    """Facet counts per member (bars) with the answer written above; saved atomically."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from .atomic import save_figure

    names = [r.member.key for r in fr.results]
    bundles = sorted({b for r in fr.results for b in r.facets})
    fig, ax = plt.subplots(figsize=(max(6, 0.9 * len(names) + 2), 4.5))
    width = 0.8 / max(1, len(bundles))
    for k, b in enumerate(bundles):
        xs = [i + (k - (len(bundles) - 1) / 2) * width for i in range(len(names))]
        ys = [r.facets.get(b, 0) for r in fr.results]
        ax.bar(xs, ys, width=width, label=b)
    peak = max((v for r in fr.results for v in r.facets.values()), default=1)
    ax.set_yscale("log")
    ax.set_ylim(1, peak * 40)
    for i, r in enumerate(fr.results):
        top = max(r.facets.values(), default=1)
        ax.text(i, top * 1.3, r.answer, ha="center", va="bottom", fontsize=7, rotation=90)
    ax.set_xticks(range(len(names)))
    ax.set_xticklabels(names, rotation=60, ha="right", fontsize=7)
    ax.set_ylabel("facets (exact derivations only; log scale)")
    ax.set_title(f"nogo family: {fr.question}")
    if bundles:
        ax.legend(fontsize=8)
    fig.tight_layout()
    save_figure(fig, path, dpi=120)
    plt.close(fig)
