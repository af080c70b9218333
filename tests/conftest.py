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
