"""Sweeps: the grid, each point as an ordinary flight, bad --set values."""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest
from typer.testing import CliRunner

from propulsion import fields
from propulsion.ascent import fly
from propulsion.cli import app
from propulsion.fields import FieldError
from propulsion.mission import load_mission, parse_mission
from propulsion.studies.sweep import SweepError, parse_axis, sweep

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
runner = CliRunner()


def test_axis_values_with_units() -> None:
    document = load_mission(MISSIONS / "two_stage_competition.toml").document
    axis = parse_axis(document, "vehicle.payload=100 g..0.5 kg:5")
    assert axis.values == pytest.approx((0.1, 0.2, 0.3, 0.4, 0.5), rel=1e-12)
    # 1 lb = 0.45359237 kg exactly (international yard and pound agreement, 1959)
    pounds = parse_axis(document, "stage.sustainer.inert_mass=1 lb..2 lb:2")
    assert pounds.values == pytest.approx((0.45359237, 0.90718474), rel=1e-15)
    counts = parse_axis(document, "stage.booster.motor.count=1..3:5")
    assert counts.values == (1.0, 2.0, 3.0)


def test_every_point_is_the_ordinary_flight() -> None:
    mission = load_mission(MISSIONS / "two_stage_competition.toml")
    axes = [
        parse_axis(mission.document, "vehicle.payload=0.1 kg..0.3 kg:3"),
        parse_axis(mission.document, "launch.elevation=80 deg..89 deg:2"),
    ]
    result = sweep(mission, axes)
    frame = result.to_frame()
    assert len(frame) == 6 and not result.skipped
    assert list(frame.columns[:2]) == ["vehicle.payload_kg", "launch.elevation_rad"]
    row = frame.iloc[3]
    document = fields.set_value(mission.document, axes[0].ref, float(row["vehicle.payload_kg"]))
    document = fields.set_value(document, axes[1].ref, float(row["launch.elevation_rad"]))
    direct = fly(parse_mission(document, base_dir=MISSIONS), margin=False)
    assert row["apogee_m"] == pytest.approx(direct.apogee, rel=1e-12)
    # more payload, lower apogee, at either elevation
    for elevation in frame["launch.elevation_rad"].unique():
        part = frame[frame["launch.elevation_rad"] == elevation]
        assert part["apogee_m"].is_monotonic_decreasing


def test_impossible_points_are_skipped_with_the_reason() -> None:
    mission = load_mission(MISSIONS / "two_stage_competition.toml")
    axis = parse_axis(mission.document, "stage.sustainer.inert_mass=-0.2 kg..0.8 kg:3")
    result = sweep(mission, [axis])
    assert len(result.to_frame()) == 2
    ((point, reason),) = result.skipped
    assert point == (-0.2,) and "inert_mass" in reason


def test_bad_settings() -> None:
    document = load_mission(MISSIONS / "two_stage_competition.toml").document
    with pytest.raises(FieldError, match=r"did you mean 'vehicle\.payload'"):
        parse_axis(document, "vehicle.paylod=1 kg..2 kg:3")
    with pytest.raises(SweepError, match=r"FIELD=START\.\.STOP:N"):
        parse_axis(document, "vehicle.payload 1 kg 2 kg")
    with pytest.raises(SweepError, match="expected mass"):
        parse_axis(document, "vehicle.payload=1 m..2 m:3")


def test_sweep_command_and_export(tmp_path: Path) -> None:
    path = str(MISSIONS / "hobby_single_stage.toml")
    out = tmp_path / "grid.csv"
    args = ["sweep", path, "--set", "vehicle.payload=0.05 kg..0.25 kg:3", "--export", str(out)]
    result = runner.invoke(app, args)
    assert result.exit_code == 0, result.output
    assert "Sweep of vehicle.payload: 3 points" in " ".join(result.output.split())
    frame = pd.read_csv(out)
    assert len(frame) == 3
    again = runner.invoke(app, args)
    assert again.exit_code == 2 and "--force" in again.stderr
    bad = runner.invoke(app, ["sweep", path, "--set", "vehicle.paylod=1 kg..2 kg:2"])
    assert bad.exit_code == 2 and "did you mean 'vehicle.payload'" in bad.stderr
