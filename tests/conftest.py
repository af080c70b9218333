"""Shared fixtures; slow tests run only with --runslow (CI runs them deliberately)."""

from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
THEORIES = ROOT / "theories"


def pytest_addoption(parser):
    parser.addoption("--runslow", action="store_true", default=False, help="run tests marked slow")


def pytest_collection_modifyitems(config, items):
    if config.getoption("--runslow"):
        return
    skip = pytest.mark.skip(reason="slow: run with --runslow")
    for item in items:
        if "slow" in item.keywords:
            item.add_marker(skip)


@pytest.fixture
def theory():
    from nogo.theory import load_theory

    def load(name: str):
        return load_theory(THEORIES / f"{name}.yaml")
    return load


# -- a summary a person can follow: one line per test file -------------------------------
_BY_FILE: dict[str, dict[str, float]] = {}


def pytest_runtest_logreport(report):
    f = report.nodeid.split("::", 1)[0]
    row = _BY_FILE.setdefault(f, {"passed": 0, "failed": 0, "skipped": 0, "seconds": 0.0})
    row["seconds"] += report.duration
    if report.when == "call":
        row["passed" if report.passed else "failed" if report.failed else "skipped"] += 1
    elif report.when == "setup" and (report.skipped or report.failed):
        row["skipped" if report.skipped else "failed"] += 1


def pytest_terminal_summary(terminalreporter):
    if not _BY_FILE:
        return
    tr = terminalreporter
    tr.section("summary by file")
    width = max(len(f) for f in _BY_FILE)
    tr.write_line(f"{'file':<{width}}  {'passed':>6}  {'failed':>6}  {'skipped':>7}  {'seconds':>8}")
    for f, r in sorted(_BY_FILE.items()):
        tr.write_line(f"{f:<{width}}  {int(r['passed']):>6}  {int(r['failed']):>6}  {int(r['skipped']):>7}  "
                      f"{r['seconds']:>8.1f}")
    if any(r["skipped"] for r in _BY_FILE.values()):
        tr.write_line("skipped tests are marked slow (over about 20 s); run them with --runslow")
