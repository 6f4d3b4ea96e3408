"""Packages for setuptools (the project's metadata is in pyproject.toml).

The rule profiles and part classes live once, in the top-level rules/ folder; a wheel installs
that folder as the data package frontcheck.rules (frontcheck/profiles.py finds it there, or in
place in a checkout or editable install).
"""

from setuptools import find_packages, setup

setup(
    packages=find_packages(include=["frontcheck", "frontcheck.*"]) + ["frontcheck.rules"],
    package_dir={"frontcheck.rules": "rules"},
    package_data={"frontcheck.rules": ["*.toml", "parts/*.toml"]},
)
