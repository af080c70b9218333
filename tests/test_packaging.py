"""A non-editable install carries the catalog and the shipped theories.

Builds a wheel of this tree, installs it into a fresh virtual environment
and runs ``nogo`` from an empty folder.  Offline: the wheel is built without
build isolation (the current environment's setuptools and wheel) and
installed with ``--no-index --no-deps``; the new environment sees the
current one's libraries (numpy, scipy, ...) through a ``.pth`` line that
adds the current site-packages folder as a plain path, so that editable
installs of nogo there (whose hooks live in .pth files of that folder) are
not activated and cannot shadow the installed wheel.

The values checked (CHSH's local bound 2) are the tool's own behaviour after
installation; the bound itself is Clauser, Horne, Shimony, Holt, PRL 23, 880
(1969).
"""

from __future__ import annotations

import importlib.util
import json
import shutil
import subprocess
import sys
import sysconfig
import venv
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent


def _can_build_wheels() -> bool:
    if importlib.util.find_spec("setuptools") is None:
        return False
    try:
        from setuptools.command import bdist_wheel  # noqa: F401  (setuptools >= 70.1)
        return True
    except ImportError:
        return importlib.util.find_spec("wheel") is not None


def _run(cmd, **kw):
    return subprocess.run(cmd, capture_output=True, text=True, timeout=300, **kw)


@pytest.fixture(scope="module")
def installed(tmp_path_factory):
    if not _can_build_wheels():
        pytest.skip("setuptools with wheel support is not installed here (pip install wheel)")
    tmp = tmp_path_factory.mktemp("pkg")
    src = tmp / "src"  # a copy, so the build leaves nothing (build/, *.egg-info) in the work tree
    for name in ("nogo", "catalog", "theories"):
        shutil.copytree(ROOT / name, src / name, ignore=shutil.ignore_patterns("__pycache__", "*.pyc"))
    for name in ("pyproject.toml", "setup.py", "README.md"):
        shutil.copy2(ROOT / name, src / name)
    wheels = tmp / "wheels"
    build = _run([sys.executable, "-m", "pip", "wheel", "--no-deps", "--no-build-isolation", "--no-index",
                  "-w", str(wheels), str(src)], cwd=tmp)
    assert build.returncode == 0, build.stdout[-2000:] + build.stderr[-2000:]
    (wheel,) = wheels.glob("nogo-*.whl")
    env_dir = tmp / "venv"
    venv.EnvBuilder(with_pip=False).create(env_dir)
    py = env_dir / ("Scripts/python.exe" if sys.platform == "win32" else "bin/python")
    site = Path(_run([str(py), "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"]).stdout.strip())
    outer = {sysconfig.get_paths()["purelib"], sysconfig.get_paths()["platlib"]}
    (site / "_outer_libraries.pth").write_text("\n".join(sorted(outer)) + "\n")
    inst = _run([str(py), "-m", "pip", "install", "--no-index", "--no-deps", "--no-compile", str(wheel)], cwd=tmp)
    assert inst.returncode == 0, inst.stdout[-2000:] + inst.stderr[-2000:]
    empty = tmp / "empty"
    empty.mkdir()
    scripts = py.parent
    return py, scripts, empty, site


def test_wheel_carries_the_catalog_and_theories(installed):
    py, scripts, empty, site = installed
    where = _run([str(py), "-c", "import nogo.cli, nogo.shipped as s; print(nogo.cli.__file__); "
                  "print(s.shipped_dir('catalog')); print(s.shipped_dir('theories'))"], cwd=empty)
    assert where.returncode == 0, where.stderr
    cli, catalog, theories = where.stdout.split("\n")[:3]
    assert cli.startswith(str(site)), "the installed wheel, not a source tree, must be imported"
    assert catalog.startswith(str(site)) and catalog.endswith("catalog")
    assert theories.startswith(str(site)) and theories.endswith("theories")


def test_check_with_a_catalog_name_from_an_empty_folder(installed):
    py, scripts, empty, site = installed
    nogo = scripts / ("nogo.exe" if sys.platform == "win32" else "nogo")
    r = _run([str(nogo), "check", "bell-2x2", "Bell-local", "CHSH", "--json"], cwd=empty)
    assert r.returncode == 0, r.stderr
    data = json.loads(r.stdout)
    assert data["verdict"] == "implied"
    assert data["maximum"] == "2"  # CHSH local bound (Clauser, Horne, Shimony, Holt 1969)
    listing = _run([str(nogo), "catalog"], cwd=empty)
    assert listing.returncode == 0 and "CHSH" in listing.stdout and "I3322" in listing.stdout
    version = _run([str(nogo), "--version"], cwd=empty)
    assert version.returncode == 0 and version.stdout.startswith("nogo ")
    assert list(empty.iterdir()) == [], "nothing may be written into the working folder"
