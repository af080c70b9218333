"""A seeded mutator for nogo's input files (theories, catalog entries, experiments, patterns).

Each mutant is the shipped text with one to three edits drawn from the
kinds of mistake people make and the kinds of trick malformed input plays:
a line dropped, doubled, swapped or re-indented; a token replaced by another
name of the file, a number, a boolean, ``null``, a reserved character, a
fraction with zero denominator, an explicit YAML tag, an alias, a long or
deeply nested value; a character inserted or deleted.  Used by
``tests/test_fuzz.py``; ``python tests/mutate.py FILE N`` prints N mutants.
"""

from __future__ import annotations

import random
import re
import sys

TOKEN = re.compile(r"[A-Za-z_][A-Za-z0-9_@.\-]*|[+-]?\d+(?:/\d+)?|\S")

SPECIAL = [
    "true", "false", "null", "~", "yes", "0", "1", "-1", "+1", "1/0", "0/0", "1e999", "-0", "2020-01-01",
    "'True'", '"1"', "A@2", "A@*", "A_in@1", "a b", "x*y", "[]", "{}", "[1, [2]]", "{a: 1}", "''", "@", "|", ">",
    "!!int abc", "!!bool abc", "!!float x", "!!timestamp abc", "!!map abc", "!!seq abc", "!!str", "!!binary QQ==",
    "!!set {a}", "!!omap [a: 1]", "!!pairs [a: 1]", "!foo x", "&anchor x", "*anchor", "*nothing",
    "<=", ">=", "<", "+", "-", "(", ")", "<A1 B1>", "p(+1 +1|1 1)", "⟨A1⟩", "≤", "λ", "\t", "#",
    "x" * 300, "9" * 40, "[" * 80 + "]" * 80, "{a: " * 70 + "1" + "}" * 70,
]
INSERT = list(":-[]{}'\"#&*!|>@+,?%` \t") + ["\n", "  "]
ALIAS_BOMB = ("&b0 [x, x, x, x, x, x, x, x, x, x]\n_b1: &b1 [*b0, *b0, *b0, *b0, *b0, *b0, *b0, *b0, *b0, *b0]\n"
              "_b2: &b2 [*b1, *b1, *b1, *b1, *b1, *b1, *b1, *b1, *b1, *b1]\n"
              "_b3: &b3 [*b2, *b2, *b2, *b2, *b2, *b2, *b2, *b2, *b2, *b2]\n"
              "_b4: [*b3, *b3, *b3, *b3, *b3, *b3, *b3, *b3, *b3, *b3]")


def _edit_lines(text: str, rng: random.Random) -> str:
    lines = text.split("\n")
    if len(lines) < 2:
        return text + rng.choice(INSERT)
    i = rng.randrange(len(lines))
    kind = rng.randrange(5)
    if kind == 0:
        del lines[i]
    elif kind == 1:
        lines.insert(i, lines[i])
    elif kind == 2:
        j = rng.randrange(len(lines))
        lines[i], lines[j] = lines[j], lines[i]
    elif kind == 3:
        lines[i] = "  " + lines[i]
    else:
        lines[i] = lines[i][2:] if lines[i].startswith("  ") else lines[i].lstrip()
    return "\n".join(lines)


def _edit_token(text: str, rng: random.Random) -> str:
    toks = list(TOKEN.finditer(text))
    if not toks:
        return text + rng.choice(SPECIAL)
    m = rng.choice(toks)
    pool = [t.group() for t in toks if len(t.group()) > 1]
    r = rng.random()
    if r < 0.45:
        new = rng.choice(SPECIAL)
    elif r < 0.75 and pool:
        new = rng.choice(pool)  # another name of the same file: collisions, wrong kinds
    elif r < 0.85:
        new = m.group() + rng.choice(["@1", "*", "+x", "|", " ", "2", "_", "-"])
    elif r < 0.92:
        new = ""
    else:
        new = m.group() * rng.randint(2, 4)
    return text[:m.start()] + new + text[m.end():]


def _edit_char(text: str, rng: random.Random) -> str:
    if not text:
        return rng.choice(INSERT)
    i = rng.randrange(len(text))
    if rng.random() < 0.5:
        return text[:i] + text[i + 1:]
    return text[:i] + rng.choice(INSERT) + text[i:]


def _edit_value(text: str, rng: random.Random) -> str:
    """Replace the value after some ``key:`` with an alias bomb or a tagged oddity."""
    keys = list(re.finditer(r"^(\s*[\w@.-]+:)[ \t]*(.*)$", text, re.M))
    if not keys:
        return text
    m = rng.choice(keys)
    new = rng.choice([ALIAS_BOMB, "!!pairs [a: 1, b: 2]", "!!omap [a: 1]", "!!set {a, b}", "!!binary QUJD",
                      "!!int abc", "{true: 0, 1: 1}", "{True: x, 'True': y}", "[" * 200 + "]" * 200, "1/0"])
    return text[:m.start(2)] + new + text[m.end(2):]


EDITS = (_edit_lines, _edit_token, _edit_token, _edit_char, _edit_value)


def mutate(text: str, rng: random.Random) -> str:
    """One mutant of *text*: one to three edits."""
    for _ in range(rng.choice((1, 1, 2, 3))):
        text = rng.choice(EDITS)(text, rng)
    return text


def mutants(text: str, n: int, seed: int):
    """*n* mutants of *text*, reproducible from *seed*."""
    rng = random.Random(seed)
    for _ in range(n):
        yield mutate(text, rng)


if __name__ == "__main__":  # pragma: no cover - a tool for looking at mutants
    src = open(sys.argv[1], encoding="utf-8").read()
    for k, m in enumerate(mutants(src, int(sys.argv[2]) if len(sys.argv) > 2 else 5, 1)):
        print(f"--- mutant {k}\n{m}")
