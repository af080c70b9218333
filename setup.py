"""Build script: everything is declared in pyproject.toml except the package layout.

The catalog of inequalities (``catalog/``) and the shipped theories
(``theories/``) stay at the repository root, where contributors edit them;
here they are mapped into the package as ``nogo._data.catalog`` and
``nogo._data.theories`` so that an installed wheel carries them
(found by :mod:`nogo.shipped`).
"""

from setuptools import find_namespace_packages, setup

DATA = {"nogo._data.catalog": "catalog", "nogo._data.theories": "theories"}

setup(
    packages=find_namespace_packages(include=["nogo", "nogo.*"], exclude=["*.__pycache__"]) + list(DATA),
    package_dir=DATA,
    package_data={name: ["*.yaml"] for name in DATA},
    include_package_data=False,
)
