"""``loopcheck stages`` on the command line: bad output paths are one-line errors, exit code 2,
checked before the board is read; the stages' text and JSON come from loopcheck.report.stages."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

from click.testing import CliRunner

from loopcheck.cli import main
from loopcheck.commands import stages_cmd

REPO = Path(__file__).resolve().parents[1]


def test_write_project_to_a_folder_is_one_line_exit_2(tmp_path, monkeypatch):
    read = []
    monkeypatch.setattr(stages_cmd, "load_project", lambda board: read.append(board))
    folder = tmp_path / "out"
    folder.mkdir()
    r = CliRunner().invoke(main, ["stages", str(tmp_path), "--write-project", str(folder)])
    assert r.exit_code == 2
    lines = r.output.strip().splitlines()
    assert len(lines) == 1, r.output
    assert lines[0].startswith(f"loopcheck: {folder}: --write-project: is a folder")
    assert "Usage:" not in r.output and "Traceback" not in r.output
    assert read == []                       # refused before the board is read
    assert list(folder.iterdir()) == []


def test_write_project_to_a_folder_in_a_real_process(tmp_path):
    # the same through the installed entry point's code path, stderr only
    res = subprocess.run([sys.executable, "-c", "from loopcheck.cli import main; main()", "stages",
                          str(tmp_path), "--write-project", str(tmp_path)],
                         capture_output=True, text=True, cwd=str(REPO), timeout=120)
    assert res.returncode == 2, res.stderr
    assert res.stdout == ""
    assert res.stderr.count("\n") == 1 and "is a folder" in res.stderr


def test_stages_renderers_live_in_the_report_package():
    from loopcheck.report import stages as report_stages

    assert stages_cmd.render_text is report_stages.render_text
    assert stages_cmd.stages_data is report_stages.stages_data
    assert stages_cmd.project_text is report_stages.project_text
