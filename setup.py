"""The package list and the one mapping pyproject.toml cannot say: the shipped rule decks live
in the project's top-level ``rules/`` folder, where users read and copy them, and are installed
from there as the data package ``loopcheck.decks`` (one copy in the repository)."""

from setuptools import find_packages, setup

setup(
    packages=find_packages(include=["loopcheck", "loopcheck.*"]) + ["loopcheck.decks"],
    package_dir={"loopcheck.decks": "rules"},
    package_data={"loopcheck": ["schemas/*.json"], "loopcheck.decks": ["*.toml"]},
)
