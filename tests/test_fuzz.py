"""Fuzz: malformed input ends in an InputError (a clean one-line message), never an internal error or a hang.

Seeded mutants (``tests/mutate.py``) of every shipped theory, catalog entry,
inequality text, experiment and support pattern go through the API (load,
validate, size guard, compile, decide) and a smaller sample through the
command line (``nogo.cli.main``).  The assertions: every exception is an
``InputError``; no mutant takes more than ``HANG`` seconds; on the command
line the exit status is 0, 1 or 2, stderr has no "internal error" and no
traceback, and an error is one line.  This is the tool's own behaviour; no
published value is involved.
"""

from __future__ import annotations

import random
import signal
import sys
import time
import zlib
from contextlib import contextmanager
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).resolve().parent))
from mutate import mutants  # noqa: E402

from nogo.catalog import _entries_from_file, load_catalog  # noqa: E402
from nogo.check import decide  # noqa: E402
from nogo.cli import main  # noqa: E402
from nogo.compile import compile_bundle  # noqa: E402
from nogo.errors import InputError  # noqa: E402
from nogo.inequality import parse_inequality  # noqa: E402
from nogo.possibilistic.support import load_pattern_text  # noqa: E402
from nogo.quantum.experiment import load_experiment_text  # noqa: E402
from nogo.theory import load_theory, load_theory_text  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
THEORIES = sorted((ROOT / "theories").glob("*.yaml"))
CATALOG = sorted((ROOT / "catalog").glob("*.yaml"))
EXPERIMENTS = sorted((ROOT / "examples" / "experiments").glob("*.yaml"))
PATTERNS = sorted((ROOT / "examples" / "patterns").glob("*.yaml"))
HANG = 10.0  # seconds; the acceptance limit of issue 14
LIMIT = 1_500  # columns: larger (mutated or shipped) models are refused by the size guard, quickly


class Hang(BaseException):  # not an Exception: main() must not swallow it
    pass


@contextmanager
def deadline(seconds: float):
    def fire(signum, frame):
        raise Hang()

    old = signal.signal(signal.SIGALRM, fire)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, old)


def _theory_job(text: str, name: str, rng: random.Random) -> None:
    th = load_theory_text(text, name)
    bundles = list(th.bundles)
    for b in rng.sample(bundles, min(2, len(bundles))):
        model = compile_bundle(th, b, max_columns=LIMIT)
        try:
            ineq = load_catalog()["CHSH"].inequality(th.scenario)
        except InputError:
            continue
        decide(model, ineq)


def _catalog_job(text: str, name: str, rng: random.Random, tmp: Path, scenarios) -> None:
    path = tmp / "entry.yaml"
    path.write_text(text, encoding="utf-8")
    for entry in _entries_from_file(path):
        for sc in scenarios:
            try:
                entry.inequality(sc)
            except InputError:
                pass


def _expression_job(text: str, scenarios) -> None:
    for sc in scenarios:
        try:
            parse_inequality(sc, text)
        except InputError:
            pass


def _experiment_job(text: str, name: str, theory) -> None:
    from nogo.quantum.certify import evaluate

    exp = load_experiment_text(text, theory, name)
    ineq = None
    try:
        ineq = load_catalog()["CHSH"].inequality(exp.scenario)
    except InputError:
        return
    evaluate(exp, [ineq], want_exact=False)


def _pattern_job(text: str, name: str, theory, rng: random.Random) -> None:
    from nogo.possibilistic import decide_pattern

    pattern = load_pattern_text(text, theory.scenario, name)
    decide_pattern(theory, rng.choice(list(theory.bundles)), pattern, minimise="minimal", time_limit=2.0)


def _expressions():
    out = []
    for path in CATALOG:
        for e in _entries_from_file(path):
            out.append(e.expression)
    return out + ["<A1 B1> + <A1 B2> + <A2 B1> - <A2 B2> >= -2", "p(+1 +1|1 1) - p_A(+1|1) <= 0"]


def _run_all(jobs) -> tuple[list, list, int]:
    internal, hangs, n = [], [], 0
    for label, mutant, job in jobs:
        n += 1
        t0 = time.monotonic()
        try:
            with deadline(HANG):
                job()
        except InputError:
            pass
        except Hang:
            hangs.append((label, mutant))
        except Exception as exc:  # noqa: BLE001 - what we are looking for
            internal.append((label, f"{type(exc).__name__}: {exc}"[:300], mutant))
        if time.monotonic() - t0 > HANG and (label, mutant) not in hangs:
            hangs.append((label, mutant))
    return internal, hangs, n


def _report(internal, hangs) -> str:
    lines = []
    for label, err, mutant in internal[:5]:
        lines.append(f"--- {label}: {err}\n{mutant[:1500]}")
    for label, mutant in hangs[:3]:
        lines.append(f"--- {label}: more than {HANG} s\n{mutant[:1500]}")
    return "\n".join(lines)


def api_jobs(tmp_path: Path) -> list:
    """(label, mutant text, job) for every API mutant, reproducible."""
    rng = random.Random(14)
    scenarios = [load_theory(ROOT / "theories" / n).scenario for n in ("bell-2x2.yaml", "bell-2x3.yaml", "bell-3x2.yaml")]
    jobs = []
    for path in THEORIES:  # 12 files x 90
        text = path.read_text(encoding="utf-8")
        for k, m in enumerate(mutants(text, 90, seed=zlib.crc32(path.name.encode()))):
            jobs.append((f"{path.name}#{k}", m, lambda m=m, n=path.name: _theory_job(m, n, rng)))
    for path in CATALOG:  # 5 x 80
        text = path.read_text(encoding="utf-8")
        for k, m in enumerate(mutants(text, 80, seed=len(path.name))):
            jobs.append((f"{path.name}#{k}", m, lambda m=m: _catalog_job(m, "entry.yaml", rng, tmp_path, scenarios)))
    for i, expr in enumerate(_expressions()):  # 7 x 40
        for k, m in enumerate(mutants(expr, 40, seed=100 + i)):
            jobs.append((f"expression {i}#{k}", m, lambda m=m: _expression_job(m, scenarios)))
    for path in EXPERIMENTS:  # 3 x 50
        text = path.read_text(encoding="utf-8")
        theory = load_theory((path.parent / _theory_ref(text)).resolve())
        for k, m in enumerate(mutants(text, 50, seed=200 + len(path.name))):
            jobs.append((f"{path.name}#{k}", m, lambda m=m, th=theory, n=str(path): _experiment_job(m, n, th)))
    for path in PATTERNS:  # 4 x 50
        text = path.read_text(encoding="utf-8")
        theory = load_theory(ROOT / "theories" / ("bell-3x2.yaml" if "ghz" in path.name else "bell-2x2.yaml"))
        for k, m in enumerate(mutants(text, 50, seed=300 + len(path.name))):
            jobs.append((f"{path.name}#{k}", m, lambda m=m, th=theory, n=path.name: _pattern_job(m, n, th, rng)))
    return jobs


def test_api_mutants_give_input_errors_only(tmp_path):
    """At least 2,000 seeded mutants through the API: zero internal errors, zero hangs."""
    jobs = api_jobs(tmp_path)
    assert len(jobs) >= 2000
    internal, hangs, n = _run_all(jobs)
    assert n == len(jobs)
    assert not internal and not hangs, f"{len(internal)} internal errors, {len(hangs)} hangs\n" + _report(internal, hangs)


def _theory_ref(text: str) -> str:
    for line in text.splitlines():
        if line.startswith("theory:"):
            return line.split(":", 1)[1].strip()
    raise AssertionError("an experiment without 'theory:'")


COMMANDS = [
    # (shipped file to mutate, argument list with {f} for the mutant's path)
    ("theories/bell-2x2.yaml", ["check", "{f}", "Bell-local", "CHSH"]),
    ("theories/friends-2x2.yaml", ["check", "{f}", "local-friendliness", "CHSH", "--json"]),
    ("theories/hidden-2x2.yaml", ["show", "{f}"]),
    ("theories/friends-2x2.yaml", ["minimal", "{f}", "CHSH", "--time-limit", "5", "--max-columns", "1500"]),
    ("catalog/chsh.yaml", ["check", "theories/bell-2x2.yaml", "no-signalling", "{f}"]),
    ("examples/patterns/hardy.yaml", ["proof", "theories/bell-2x2.yaml", "Bell-local", "{f}"]),
]


@pytest.mark.parametrize("source,argv", COMMANDS, ids=[f"{a[0]}:{s.split('/')[-1]}" for s, a in COMMANDS])
def test_command_line_mutants_end_cleanly(tmp_path, capsys, monkeypatch, source, argv):
    """100+ mutants through ``nogo`` itself: exit 0/1/2, no internal error, no traceback, one-line errors."""
    monkeypatch.chdir(ROOT)
    monkeypatch.setenv("NOGO_CACHE", str(tmp_path / "cache"))
    text = (ROOT / source).read_text(encoding="utf-8")
    bad = []
    for k, m in enumerate(mutants(text, 18, seed=400 + len(source))):
        f = tmp_path / f"m{k}.yaml"
        f.write_text(m, encoding="utf-8")
        args = [a.replace("{f}", str(f)) for a in argv]
        t0 = time.monotonic()
        try:
            with deadline(HANG):
                code = main(args)
        except Hang:
            bad.append((k, "hang", m))
            continue
        except SystemExit as exc:  # argparse
            code = exc.code
        out = capsys.readouterr()
        if code not in (0, 1, 2) or "internal error" in out.err or "Traceback" in out.err \
                or (code == 2 and out.err.startswith("nogo: error:") and out.err.count("\n") != 1) \
                or time.monotonic() - t0 > HANG:
            bad.append((k, f"exit {code}: {out.err[-300:]}", m))
    assert not bad, "\n".join(f"--- mutant {k}: {why}\n{m[:1200]}" for k, why, m in bad[:3])
