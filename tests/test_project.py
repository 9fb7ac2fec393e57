"""The board project file (loopcheck.toml) and the stackup defaults."""

from __future__ import annotations

import zipfile
from pathlib import Path

import pytest

from loopcheck.errors import InputError
from loopcheck.project import StackupSpec, load_project
from loopcheck.stackup import build_stackup, layer_names


def _write(folder: Path, text: str, name: str = "loopcheck.toml") -> Path:
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return path


FULL = """
[board]
name = "demo"
fab = "fab"

[files]
"board-inner1.gbr" = "copper:2"
"board-outline.gbr" = "outline"

[stackup]
copper_um = [35, 17.5, 17.5, 35]
dielectric_um = [200, 1065, 200]
dielectric_er = [4.2]
finished_mm = 1.6

[components]
RS1 = "0.068"
C1 = 10e-6

[operating_point]
vin_v = [20, 40]
iout_a = 1.5

[stages.buck1]
topology = "buck"
switch = "Q1"
input_caps = ["C1", "C2"]
output_caps = "C5"
switch_node = "SW"
[stages.buck1.operating_point]
fsw_hz = 400e3

[rules]
deck = "led-driver"
[rules.thresholds."hot-loop-area"]
warning = 40
error = 120
[rules.stage_thresholds.buck1."hot-loop-area"]
warning = 60

[[waivers]]
rule = "sense-kelvin"
where = "buck1"
reason = "Kelvin pads added in rev B"
"""


def test_full_project_file(tmp_path):
    (tmp_path / "fab").mkdir()
    p = load_project(_write(tmp_path, FULL))
    assert p.name == "demo"
    assert p.fab == tmp_path / "fab"
    assert p.files == {"board-inner1.gbr": "copper:2", "board-outline.gbr": "outline"}
    assert p.stackup.copper_um == [35, 17.5, 17.5, 35]
    assert p.stackup.dielectric_er == [4.2]
    assert p.components == {"RS1": "0.068", "C1": "1e-05"}
    assert p.operating_point == {"vin_v": [20.0, 40.0], "iout_a": 1.5}
    (stage,) = p.stages
    assert stage.name == "buck1"
    assert stage.roles["input_caps"] == ["C1", "C2"]
    assert stage.roles["output_caps"] == ["C5"]
    assert stage.operating_point == {"fsw_hz": 400e3}
    assert p.rules.deck == "led-driver"
    assert p.rules.thresholds["hot-loop-area"] == {"warning": 40, "error": 120}
    assert p.rules.stage_thresholds["buck1"]["hot-loop-area"] == {"warning": 60}
    assert p.waivers[0].where == "buck1"
    assert p.line_of("stackup.copper_um") == 11


def test_folder_with_and_without_project_file(tmp_path):
    p = load_project(tmp_path)
    assert p.path is None and p.fab == tmp_path and p.name == tmp_path.name
    _write(tmp_path, '[board]\nname = "x"\n')
    p = load_project(tmp_path)
    assert p.path == tmp_path / "loopcheck.toml" and p.fab == tmp_path and p.name == "x"


def test_zip_uses_project_file_beside_it_only_when_it_names_the_zip(tmp_path):
    z = tmp_path / "rev-a.zip"
    with zipfile.ZipFile(z, "w") as zf:
        zf.writestr("a.gbr", "G04*\n")
    p = load_project(z)
    assert p.path is None and p.fab == z and p.name == "rev-a"
    (tmp_path / "other.zip").write_bytes(z.read_bytes())
    _write(tmp_path, '[board]\nname = "named"\nfab = "other.zip"\n')
    assert load_project(z).path is None
    assert load_project(tmp_path / "other.zip").name == "named"


@pytest.mark.parametrize("text, key, line", [
    ("[stackup]\ncopper_um = 35\n", "stackup.copper_um: expected a list of numbers", 2),
    ("[stackup]\ncopper_um = [35, \"x\"]\n", "stackup.copper_um: expected a list of numbers", 2),
    ("[stackup]\ncopper_mm = [1]\n", "stackup.copper_mm: unknown key", 2),
    ("[bord]\nname = 'x'\n", "bord: unknown key", 1),
    ("[board]\nname = 3\n", "board.name: expected a string", 2),
    ("[files]\n\"a.gbr\" = \"copper\"\n", "files.\"a.gbr\": unknown role", 2),
    ("[operating_point]\nvin_v = [40, 20]\n", "operating_point.vin_v: expected one number or a range", 2),
    ("[operating_point]\nvin = 12\n", "operating_point.vin: unknown key", 2),
    ("[operating_point]\niout_a = \"lots\"\n", "operating_point.iout_a: expected a number", 2),
    ("[operating_point]\nfsw_hz = -1\n", "operating_point.fsw_hz: expected a positive number", 2),
    ("[operating_point]\nedge_ns = 0\n", "operating_point.edge_ns: expected a positive number", 2),
    ("[operating_point]\nvin_v = [-5, 20]\n", "operating_point.vin_v: expected a positive input voltage", 2),
    ("[operating_point]\nvin_v = nan\n", "operating_point.vin_v: expected a finite number", 2),
    ("[operating_point]\nripple_ratio = 2.5\n", "operating_point.ripple_ratio: expected 0..2", 2),
    ("[stages.s1.operating_point]\n\nswitch_capacitance_pf = -3\n",
     "stages.s1.operating_point.switch_capacitance_pf: expected a positive number", 3),
    ("\n\n[stages.s1]\ntopology = \"flyback\"\n", "stages.s1.topology: unknown topology", 4),
    ("[stages.s1]\nswitch = [\"Q1\"]\n", "stages.s1.switch: expected a string", 2),
    ("[[waivers]]\nrule = \"x\"\nwhere = \"y\"\n", "missing key 'reason'", 1),
    ("[rules.thresholds.\"hot-loop-area\"]\nwarning = \"high\"\n",
     "rules.thresholds.hot-loop-area.warning: expected a number", 2),
    ("[board]\nfab = \"nowhere\"\n", "board.fab: no such folder or zip", 2),
])
def test_bad_project_file_names_key_and_line(tmp_path, text, key, line):
    path = _write(tmp_path, text)
    with pytest.raises(InputError) as info:
        load_project(path)
    msg = str(info.value)
    assert key in msg
    assert msg.startswith(f"{path}:{line}: ")
    assert "\n" not in msg


def test_toml_syntax_error_has_line(tmp_path):
    path = _write(tmp_path, "[board]\nname = \n")
    with pytest.raises(InputError) as info:
        load_project(path)
    assert str(info.value).startswith(f"{path}:2: not valid TOML")


def test_missing_board_path():
    with pytest.raises(InputError, match="no such file or folder"):
        load_project("/nonexistent/board")


# --- stackup -------------------------------------------------------------------------------

def test_two_layer_defaults_are_stated():
    s, assumptions = build_stackup(2)
    assert s.copper_thickness_m == pytest.approx([35e-6, 35e-6])
    assert s.dielectrics[0].thickness_m == pytest.approx(1.53e-3)
    assert s.dielectrics[0].eps_r == 4.5
    assert s.finished_thickness_m == pytest.approx(1.6e-3)
    assert s.source == "default"
    text = " ".join(assumptions)
    assert "35 / 35 um" in text and "4.5" in text


def test_four_layer_defaults():
    s, assumptions = build_stackup(4)
    assert s.copper_thickness_m == pytest.approx([35e-6, 17.5e-6, 17.5e-6, 35e-6])
    assert [d.thickness_m for d in s.dielectrics] == pytest.approx([0.2e-3, 1.065e-3, 0.2e-3])
    assert s.finished_thickness_m == pytest.approx(1.57e-3)
    assert any("prepreg" in a for a in assumptions)


def test_six_layer_even_spread():
    s, _ = build_stackup(6)
    copper = 2 * 35 + 4 * 17.5
    assert [d.thickness_m for d in s.dielectrics] == pytest.approx([(1600 - copper) / 5 * 1e-6] * 5)
    assert s.finished_thickness_m == pytest.approx(1.6e-3)


def test_project_stackup_overrides_and_mismatch():
    spec = StackupSpec(copper_um=[70, 70], dielectric_um=[1460], dielectric_er=[4.0], finished_mm=1.6,
                       resistivity_ohm_m=1.75e-8)
    s, assumptions = build_stackup(2, spec)
    assert s.copper_thickness_m == pytest.approx([70e-6, 70e-6])
    assert s.dielectrics[0].eps_r == 4.0
    assert s.source == "project file"
    assert assumptions == []
    with pytest.raises(InputError, match="stackup.copper_um: gives 2 copper thicknesses, the fab "
                                         "outputs have 4 copper layers"):
        build_stackup(4, spec, project_path="b/loopcheck.toml", line_of=lambda k: 7)
    try:
        build_stackup(4, spec, project_path="b/loopcheck.toml", line_of=lambda k: 7)
    except InputError as exc:
        assert str(exc).startswith("b/loopcheck.toml:7: ")


def test_layer_names():
    assert layer_names(1) == ["top"]
    assert layer_names(2) == ["top", "bottom"]
    assert layer_names(4) == ["top", "inner1", "inner2", "bottom"]


def test_one_layer_and_broadcast_permittivity():
    s, assumptions = build_stackup(1)
    assert s.copper_thickness_m == pytest.approx([35e-6]) and s.dielectrics == []
    assert s.finished_thickness_m == pytest.approx(1.6e-3)
    s, _ = build_stackup(4, StackupSpec(dielectric_er=[3.8]))
    assert [d.eps_r for d in s.dielectrics] == [3.8, 3.8, 3.8]
    assert s.source == "project file + defaults"
    with pytest.raises(InputError, match="stackup.dielectric_er: gives 2 values, expected 3"):
        build_stackup(4, StackupSpec(dielectric_er=[3.8, 4.0]))
    with pytest.raises(InputError, match="stackup.dielectric_um: gives 1 dielectric thicknesses, expected 3"):
        build_stackup(4, StackupSpec(dielectric_um=[1000]))
    # a finished thickness alone spreads the dielectric evenly
    s, assumptions = build_stackup(2, StackupSpec(finished_mm=0.8))
    assert s.dielectrics[0].thickness_m == pytest.approx(0.73e-3)
    assert any("finished 0.8 mm" in a for a in assumptions)
