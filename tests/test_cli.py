"""The command line, driven in-process with typer's CliRunner, and once as `python -m`."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest
from typer.testing import CliRunner

from propulsion.cli import app
from propulsion.report.cautions import SAFETY_CAUTION

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
EXAMPLES = sorted(MISSIONS.glob("*.toml"))
runner = CliRunner()


def test_there_are_three_examples() -> None:
    assert {path.name for path in EXAMPLES} >= {
        "hobby_single_stage.toml",
        "two_stage_competition.toml",
        "orbital_launcher.toml",
    }


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_budget_runs_on_every_example(path: Path) -> None:
    result = runner.invoke(app, ["budget", str(path)])
    assert result.exit_code == 0, result.output
    assert "Ideal Δv" in result.output
    assert "PASS" in result.output
    assert "Safety caution" in result.output
    assert "planning estimates, not a safety analysis" in result.output


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_budget_json_keys(path: Path) -> None:
    result = runner.invoke(app, ["budget", str(path), "--json"])
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    assert data["safety_caution"] == SAFETY_CAUTION
    for key in ("name", "initial_mass_kg", "final_mass_kg", "isp_s", "ideal_delta_v_m_s"):
        assert all(key in stage for stage in data["stages"]), key
    for key in ("name", "required_delta_v_m_s", "delivered_delta_v_m_s", "margin_m_s"):
        assert all(key in leg for leg in data["legs"]), key
    assert data["meets_targets"] is True
    total = sum(stage["ideal_delta_v_m_s"] for stage in data["stages"])
    assert data["total_ideal_delta_v_m_s"] == pytest.approx(total, rel=1e-12)


def test_budget_us_units_convert_exactly() -> None:
    path = str(MISSIONS / "hobby_single_stage.toml")
    si = json.loads(runner.invoke(app, ["budget", path, "--json"]).stdout)
    shown = runner.invoke(app, ["budget", path, "--units", "us"]).output
    assert "ft/s" in shown and "lbf" in shown and " lb " in shown
    # 1 ft = 0.3048 m exactly (international yard and pound agreement, 1959)
    dv_ft_s = si["stages"][0]["ideal_delta_v_m_s"] / 0.3048
    assert f"{dv_ft_s:,.1f}" in shown


def test_budget_exit_code_1_when_short(tmp_path: Path) -> None:
    text = (MISSIONS / "hobby_single_stage.toml").read_text().replace('"1 km"', '"5 km"')
    mission = tmp_path / "too_high.toml"
    mission.write_text(text)
    result = runner.invoke(app, ["budget", str(mission)])
    assert result.exit_code == 1
    assert "SHORT" in result.output and "Falls short" in result.output
    data = json.loads(runner.invoke(app, ["budget", str(mission), "--json"]).stdout)
    assert data["meets_targets"] is False


def test_bad_input_exit_code_2_without_traceback(tmp_path: Path) -> None:
    mission = tmp_path / "bad.toml"
    mission.write_text('[vehicle]\npayload = 2.4\n[[stage]]\nname = "a"\n')
    result = runner.invoke(app, ["budget", str(mission)])
    assert result.exit_code == 2
    assert "bad.toml" in result.stderr and "vehicle.payload" in result.stderr
    assert "line 2" in result.stderr
    assert "Traceback" not in result.output
    # --debug shows the traceback, and bad input still exits with 2
    debug = runner.invoke(app, ["--debug", "budget", str(mission)])
    assert debug.exit_code == 2
    assert "Traceback" in debug.stderr and "MissionError" in debug.stderr


def test_missing_file_exit_code_2(tmp_path: Path) -> None:
    result = runner.invoke(app, ["budget", str(tmp_path / "nope.toml")])
    assert result.exit_code == 2
    assert "not found" in result.stderr


def test_check_valid_and_invalid(tmp_path: Path) -> None:
    good = runner.invoke(app, ["check", str(MISSIONS / "two_stage_competition.toml")])
    assert good.exit_code == 0
    assert "Valid mission file" in good.output and "Safety caution" in good.output
    data = json.loads(
        runner.invoke(app, ["check", str(MISSIONS / "orbital_launcher.toml"), "--json"]).stdout
    )
    assert data["valid"] is True and data["stages"] == ["core", "upper"]
    bad = tmp_path / "bad.toml"
    bad.write_text("[vehicle]\npayload = '1 kg'\n[[stage]]\nname = 'x'\ninert_mas = '1 kg'\n")
    result = runner.invoke(app, ["check", str(bad), "--json"])
    assert result.exit_code == 2
    assert json.loads(result.stdout)["valid"] is False
    assert "did you mean 'inert_mass'" in result.stderr


def test_check_shows_plausibility_warnings(tmp_path: Path) -> None:
    text = (MISSIONS / "hobby_single_stage.toml").read_text()
    heavy = tmp_path / "heavy.toml"
    heavy.write_text(text.replace('inert_mass = "1.15 kg"', 'inert_mass = "12 kg"'))
    result = runner.invoke(app, ["check", str(heavy)])
    assert result.exit_code == 0
    assert "cannot lift off" in " ".join(result.output.split())


def test_data_lists_tables() -> None:
    result = runner.invoke(app, ["data", "--json"])
    assert result.exit_code == 0
    data = json.loads(result.stdout)
    keys = {family["key"] for family in data["propellant_families"]}
    assert {"black_powder", "lox_kerosene", "lox_methane", "lox_hydrogen"} <= keys
    assert all(motor["name"].startswith("pd-") for motor in data["motors"])
    assert len(data["drag_curves"]) >= 2
    shown = runner.invoke(app, ["data"]).output
    assert "pd-H113" in shown and "lox_kerosene" in shown


COMMANDS = [
    *("budget", "check", "data", "fly", "size", "pick"),
    *("split", "compare", "sweep", "scatter"),
]


@pytest.mark.parametrize("command", COMMANDS)
def test_every_command_has_help_with_an_example(command: str) -> None:
    result = runner.invoke(app, [command, "--help"])
    assert result.exit_code == 0
    assert "Example" in result.output


def test_version_and_module_entry_point() -> None:
    assert runner.invoke(app, ["--version"]).output.startswith("propulsion ")
    done = subprocess.run(
        [sys.executable, "-m", "propulsion", "budget", str(MISSIONS / "hobby_single_stage.toml")],
        capture_output=True,
        text=True,
        check=False,
        timeout=60,
    )
    assert done.returncode == 0, done.stderr
    assert "Safety caution" in done.stdout


def test_internal_error_exit_code_3(
    monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    import propulsion.ledger
    from propulsion.cli import main

    def broken(mission: object) -> None:
        raise RuntimeError("deliberate")

    monkeypatch.setattr(propulsion.ledger, "budget", broken)
    monkeypatch.setattr(sys, "argv", ["propulsion", "budget", str(EXAMPLES[0])])
    with pytest.raises(SystemExit) as exit_info:
        main()
    assert exit_info.value.code == 3
    assert "internal error" in capsys.readouterr().err


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_fly_runs_on_every_example(path: Path) -> None:
    result = runner.invoke(app, ["fly", str(path), "--no-margin"])
    assert result.exit_code == 0, result.output
    text = " ".join(result.output.split())
    assert "Delta-v ledger of the flight" in text and "gravity loss" in text
    assert "Safety caution" in text and "PASS" in text


def test_fly_json_and_trajectory_export(tmp_path: Path) -> None:
    csv = tmp_path / "flight.csv"
    path = str(MISSIONS / "hobby_single_stage.toml")
    result = runner.invoke(app, ["fly", path, "--json", "--trajectory", str(csv), "--no-margin"])
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    assert data["safety_caution"] == SAFETY_CAUTION
    assert data["status"] == "apogee" and data["meets_targets"] is True
    lines = csv.read_text().splitlines()
    assert lines[0].startswith("time [s],altitude [m],")
    last_altitude = float(lines[-1].split(",")[1])
    assert last_altitude == pytest.approx(data["apogee_m"], rel=1e-8)
    # a second run refuses to overwrite, and leaves the file as it was
    before = csv.read_bytes()
    again = runner.invoke(app, ["fly", path, "--trajectory", str(csv), "--no-margin"])
    assert again.exit_code == 2
    assert "--force" in again.stderr
    assert csv.read_bytes() == before
    # --force overwrites, in US units (1 ft = 0.3048 m exactly, 1959 agreement)
    forced = runner.invoke(
        app, ["fly", path, "--trajectory", str(csv), "--force", "--units", "us", "--no-margin"]
    )
    assert forced.exit_code == 0
    header, *rows = csv.read_text().splitlines()
    assert header.startswith("time [s],altitude [ft],")
    assert float(rows[-1].split(",")[1]) == pytest.approx(data["apogee_m"] / 0.3048, rel=1e-8)
    assert not list(tmp_path.glob(".flight.csv.*"))  # no temporary file left behind


def test_fly_exit_code_1_when_short(tmp_path: Path) -> None:
    text = (MISSIONS / "hobby_single_stage.toml").read_text().replace('"1 km"', '"2 km"')
    mission = tmp_path / "high.toml"
    mission.write_text(text)
    result = runner.invoke(app, ["fly", str(mission)])
    assert result.exit_code == 1
    assert "Falls short of the apogee target" in " ".join(result.output.split())


def test_a_command_that_flew_exits_with_its_code_and_all_its_output(tmp_path: Path) -> None:
    # after a flight the process ends at once (the compiled kernel's teardown is skipped):
    # the exit code and every byte printed must survive that
    def fly(mission: Path) -> subprocess.CompletedProcess[str]:
        return subprocess.run(
            [sys.executable, "-m", "propulsion", "fly", str(mission), "--json"],
            capture_output=True,
            text=True,
            check=False,
            timeout=120,
        )

    source = MISSIONS / "two_stage_competition.toml"
    done = fly(source)
    assert done.returncode == 0, done.stderr
    data = json.loads(done.stdout)
    assert data["meets_targets"] is True and "safety_caution" in data
    higher = tmp_path / "higher.toml"
    higher.write_text(
        source.read_text(encoding="utf-8").replace('altitude = "3000 m"', 'altitude = "5 km"'),
        encoding="utf-8",
    )
    short = fly(higher)
    assert short.returncode == 1, short.stderr
    assert json.loads(short.stdout)["meets_targets"] is False
