"""docs/fab-outputs.md stays true: one table row per corpus and real-board folder present, and no
row for a folder that is not there."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

REPO = Path(__file__).parents[1]
SHARED = REPO.parent / "shared"
DOC = REPO / "docs" / "fab-outputs.md"


def table_folders() -> list[str]:
    rows = [line for line in DOC.read_text().splitlines() if line.startswith("| `")]
    return [re.match(r"\| `([^`]+)`", row)[1] for row in rows]


def present(kind: str) -> list[str]:
    base = SHARED / kind
    return sorted(f"{kind}/{d.name}" for d in base.iterdir() if d.is_dir()) if base.is_dir() else []


def test_rows_are_unique_and_well_formed():
    rows = table_folders()
    assert rows and len(rows) == len(set(rows))
    for line in DOC.read_text().splitlines():
        if line.startswith("| `"):
            assert line.count("|") == 7, line        # six columns, none left out


@pytest.mark.parametrize("kind", ["corpus", "realboards"])
def test_table_matches_the_folders_present(kind):
    if not (SHARED / kind).is_dir():
        pytest.skip(f"../shared/{kind} is absent")
    assert sorted(r for r in table_folders() if r.startswith(kind + "/")) == present(kind)
