"""Motor and stack selection: enumeration, pruning, ranking, the chosen stack, the command."""

from __future__ import annotations

import dataclasses
import json
import math
import pickle
import shutil
from pathlib import Path

import pytest
import typer
from typer.testing import CliRunner

from propulsion import catalog
from propulsion.ascent import fly
from propulsion.constants import EARTH_EQUATORIAL_RADIUS, EARTH_MU, STANDARD_GRAVITY
from propulsion.errors import MissionFileNotFoundError
from propulsion.mission import load_mission, parse_mission
from propulsion.report.cautions import SAFETY_CAUTION
from propulsion.selection import (
    CLUSTER_SPAN,
    PickError,
    PickResult,
    cluster_fits,
    motor_options,
    pick,
)

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
HOBBY = MISSIONS / "hobby_single_stage.toml"
TWO_STAGE = MISSIONS / "two_stage_competition.toml"
MM = 1e-3

# Motor diameters as stated in data/motors/*.csv (the "# diameter" lines): pd-C7 18 mm,
# pd-E17 24 mm, pd-F43 29 mm, pd-G58 29 mm, pd-H113 38 mm, pd-I204 54 mm, pd-J443 54 mm,
# pd-K567 75 mm. Section diameters from the mission files: hobby 54 mm; two-stage booster
# 54 mm (the vehicle's), sustainer 38 mm.


def _cli() -> typer.Typer:
    """A command group holding only `pick` (the main app registers it separately)."""
    from propulsion.cli.pick import pick_command

    app = typer.Typer(add_completion=False, pretty_exceptions_enable=False)

    @app.callback()
    def _root() -> None:
        """Test group."""

    app.command("pick")(pick_command)
    return app


def _drag_free_speed(site_altitude: float, apogee: float) -> float:
    # Energy law with inverse-square gravity (Curtis, Orbital Mechanics for Engineering
    # Students, 3rd ed., eq. 2.80): v^2/2 - mu/r_site = -mu/r_apogee.
    r_site = EARTH_EQUATORIAL_RADIUS + site_altitude
    return math.sqrt(2.0 * EARTH_MU * (1.0 / r_site - 1.0 / (r_site + apogee)))


def _drag_free_apogee(site_altitude: float, speed: float) -> float:
    # The same energy law solved for the apogee reached by a vertical speed at the site.
    r_site = EARTH_EQUATORIAL_RADIUS + site_altitude
    return 1.0 / (1.0 / r_site - speed**2 / (2.0 * EARTH_MU)) - r_site


# --- the cluster fit ------------------------------------------------------------------------


@pytest.mark.parametrize("count", [1, 2, 3, 4])
def test_cluster_span_is_the_ring_closed_form(count: int) -> None:
    # Closed form (common geometry of equal circles in a circle): n touching circles of
    # diameter 1 on a ring have their centres on a circle of radius 1 / (2 sin(pi/n)), so
    # they span 1 + 1/sin(pi/n); for 2 to 4 circles the ring is the tightest packing
    # (recalled from memory). One circle spans 1.
    expected = 1.0 if count == 1 else 1.0 + 1.0 / math.sin(math.pi / count)
    assert CLUSTER_SPAN[count] == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize(
    ("motor_mm", "count", "section_mm", "fits"),
    [
        (54, 1, 54, True),  # a motor as wide as the section fits
        (54.1, 1, 54, False),
        (18, 2, 36, True),  # 2 d
        (18, 2, 35.9, False),
        (18, 3, 38.8, True),  # (1 + 2/sqrt 3) d = 38.785 mm
        (18, 3, 38.7, False),
        (18, 4, 43.5, True),  # (1 + sqrt 2) d = 43.456 mm
        (18, 4, 43.4, False),
    ],
)
def test_cluster_fit_boundaries(motor_mm: float, count: int, section_mm: float, fits: bool) -> None:
    assert cluster_fits(motor_mm * MM, count, section_mm * MM) is fits


def test_cluster_fit_without_diameters_and_bad_counts() -> None:
    assert cluster_fits(None, 4, 0.01)
    assert cluster_fits(0.2, 4, None)
    with pytest.raises(ValueError, match="1 to 4"):
        cluster_fits(0.018, 5, 0.2)


# --- enumeration ----------------------------------------------------------------------------


def test_enumeration_matches_a_hand_count() -> None:
    mission = load_mission(TWO_STAGE)
    # A target no candidate can reach, so that every combination is pruned and none flown.
    result = pick(
        mission,
        motors=["pd-C7", "pd-F43", "pd-I204"],
        max_cluster=2,
        target_apogee=1e6,
    )
    # Hand count. Booster (54 mm): C7, F43, I204 alone; 2 x C7 (36 mm); 2 x F43 needs 58 mm
    # -> 4. Sustainer (38 mm): C7, F43 alone; 2 x C7 (36 mm); I204 is too wide -> 3.
    # One stage (sustainer alone): 3; two stages: 4 x 3 = 12; in all 15.
    assert result.enumerated == 15
    assert result.flown == 0 and len(result.pruned_rows) == 15
    booster = ["pd-C7", "pd-F43", "pd-I204", "2 × pd-C7"]
    sustainer = ["pd-C7", "pd-F43", "2 × pd-C7"]
    expected = {f"sustainer: {s}" for s in sustainer} | {
        f"booster: {b}; sustainer: {s}" for b in booster for s in sustainer
    }
    assert {row.motors for row in result.pruned_rows} == expected

    wide = pick(mission, ["pd-C7", "pd-F43", "pd-I204"], (2,), max_cluster=4, target_apogee=1e6)
    # Up to 4 motors, two stages only. Booster adds 3 x C7 (38.8 mm) and 4 x C7 (43.5 mm)
    # -> 6; the sustainer cannot hold 3 x C7 (38.8 mm > 38 mm) -> 3; 6 x 3 = 18.
    assert wide.enumerated == 18
    assert wide.stage_counts == (2,)


def test_a_motor_folder_is_a_library(tmp_path: Path) -> None:
    for name in ("pd-F43", "pd-H113"):
        shutil.copy(catalog.data_dir() / "motors" / f"{name}.csv", tmp_path / f"{name}.csv")
    (tmp_path / "notes.txt").write_text("not a curve")
    options = motor_options(tmp_path)
    assert [option.name for option in options] == ["pd-F43", "pd-H113"]
    result = pick(load_mission(HOBBY), motors=tmp_path, target_apogee=1e6)
    assert result.enumerated == 2
    table = result.pruned_rows[0].mission.document["stage"][0]["motor"]
    assert Path(table["file"]).parent == tmp_path.resolve()


# --- pruning --------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def hobby_small() -> PickResult:
    # 54 mm: C7, E17, F43, G58, H113 alone, 2 x C7, 2 x E17 (2 x F43 would need 58 mm): 7.
    motors = ["pd-C7", "pd-E17", "pd-F43", "pd-G58", "pd-H113"]
    return pick(load_mission(HOBBY), motors, max_cluster=2, target_apogee=300.0)


@pytest.fixture(scope="module")
def two_stage_small() -> PickResult:
    # Two stages only. Booster (54 mm): E17, H113, I204; sustainer (38 mm): E17, H113: 6.
    motors = ["pd-E17", "pd-H113", "pd-I204"]
    return pick(load_mission(TWO_STAGE), motors, stage_counts=[2])


def test_drag_free_requirement_is_the_energy_law(
    hobby_small: PickResult, two_stage_small: PickResult
) -> None:
    # Site altitudes from the mission files: 150 m (hobby), 600 m (two-stage).
    assert hobby_small.enumerated == 7
    assert hobby_small.drag_free_delta_v == pytest.approx(_drag_free_speed(150.0, 300.0), 1e-12)
    assert two_stage_small.drag_free_delta_v == pytest.approx(
        _drag_free_speed(600.0, 3000.0), rel=1e-12
    )


def test_both_pruning_rules_occur(hobby_small: PickResult, two_stage_small: PickResult) -> None:
    # Hand reasoning: a C7 gives the 1.27 kg hobby rocket a few m/s, far below the 77 m/s
    # needed for 300 m; an E17 booster (17.4 N average thrust) cannot lift the 2.1 kg
    # two-stage stack (about 20.6 N of weight) although an H113 sustainer gives it enough
    # ideal delta-v.
    assert hobby_small.pruned["delta_v"] >= 1
    assert "sustainer: pd-C7" in {row.motors for row in hobby_small.pruned_rows}
    by_motors = {row.motors: row for row in two_stage_small.pruned_rows}
    lame = by_motors["booster: pd-E17; sustainer: pd-H113"]
    assert lame.reason == "thrust_to_weight"
    e17 = catalog.load_motor("pd-E17")
    # payload 0.15 + booster 0.70 + sustainer 0.90 kg (mission file) + loaded motors
    liftoff = 0.15 + 0.70 + 0.90 + e17.loaded_mass + catalog.load_motor("pd-H113").loaded_mass
    assert lame.liftoff_mass == pytest.approx(liftoff, rel=1e-12)
    # average thrust = total impulse / burn time (definition), weight with g0 (CGPM 1901)
    expected = e17.total_impulse / e17.burn_time / (liftoff * STANDARD_GRAVITY)
    assert lame.liftoff_thrust_to_weight == pytest.approx(expected, rel=1e-12)
    assert lame.liftoff_thrust_to_weight < 1.0
    for result, site, apogee in ((hobby_small, 150.0, 300.0), (two_stage_small, 600.0, 3000.0)):
        needed = _drag_free_speed(site, apogee)
        for pruned in result.pruned_rows:
            assert (pruned.ideal_delta_v < needed) == (pruned.reason == "delta_v"), pruned.motors
        for row in result.rows:
            assert row.ideal_delta_v >= needed and row.liftoff_thrust_to_weight >= 1.0


@pytest.mark.parametrize("which", ["hobby_small", "two_stage_small"])
def test_pruning_never_removes_a_stack_that_meets_the_target(
    which: str, request: pytest.FixtureRequest
) -> None:
    result: PickResult = request.getfixturevalue(which)
    assert result.pruned_rows and result.rows
    site = result.mission.launch.altitude
    for pruned in result.pruned_rows:
        flight = fly(pruned.mission, margin=False)
        assert flight.verdict.meets_targets is False, pruned.motors
        if math.isfinite(flight.apogee):
            assert flight.apogee < result.target_apogee, pruned.motors
            # the bound behind the rule: no flight beats the drag-free vertical climb
            assert flight.apogee <= _drag_free_apogee(site, pruned.ideal_delta_v), pruned.motors
    for row in result.rows:
        assert row.apogee <= _drag_free_apogee(site, row.ideal_delta_v), row.motors


# --- ranking --------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def ranked() -> PickResult:
    # Booster (54 mm): F43, G58, H113, I204, J443; sustainer (38 mm): F43, G58, H113.
    motors = ["pd-F43", "pd-G58", "pd-H113", "pd-I204", "pd-J443"]
    return pick(load_mission(TWO_STAGE), motors, stage_counts=(1, 2))


def _check_order(result: PickResult) -> None:
    rows = list(result.rows)
    target = result.target_apogee
    if result.criterion == "nearest_apogee":
        assert [row.rank for row in rows] == list(range(1, len(rows) + 1))
        distances = [abs(row.apogee - target) for row in rows]
        assert distances == sorted(distances)
        return
    meeting = [row for row in rows if row.meets_target]
    assert rows[: len(meeting)] == meeting, "meeting stacks come first"
    assert [row.rank for row in meeting] == list(range(1, len(meeting) + 1))
    assert all(row.rank is None for row in rows[len(meeting) :])
    values = {
        "least_impulse": [(row.unsafe_ignition, row.total_impulse) for row in meeting],
        "least_mass": [(row.unsafe_ignition, row.liftoff_mass) for row in meeting],
        "largest_margin": [(row.unsafe_ignition, -row.margin) for row in meeting],
    }[result.criterion]
    assert values == sorted(values)


@pytest.mark.parametrize(
    "criterion", ["least_impulse", "least_mass", "nearest_apogee", "largest_margin"]
)
def test_ranking_order(ranked: PickResult, criterion: str) -> None:
    assert ranked.enumerated == 3 + 5 * 3
    assert ranked.meeting >= 2 and ranked.flown > ranked.meeting
    result = ranked.ranked_by(criterion)
    assert result.criterion == criterion
    assert sorted(row.motors for row in result.rows) == sorted(row.motors for row in ranked.rows)
    _check_order(result)
    assert all(row.meets_target == (row.apogee >= result.target_apogee) for row in result.rows)


def test_ranking_by_pick_equals_reranking(ranked: PickResult, hobby_small: PickResult) -> None:
    direct = pick(
        hobby_small.mission,
        ["pd-C7", "pd-E17", "pd-F43", "pd-G58", "pd-H113"],
        max_cluster=2,
        criterion="largest-margin",
        target_apogee=300.0,
    )
    again = hobby_small.ranked_by("largest_margin")
    assert [row.motors for row in direct.rows] == [row.motors for row in again.rows]
    _check_order(direct)


def test_a_stack_that_lights_its_sustainer_badly_ranks_last(ranked: PickResult) -> None:
    # the flag follows the flight's own ignition warning
    for row in ranked.rows:
        assert row.unsafe_ignition == any(w.startswith("ignition:") for w in row.warnings)
    first = next(row for row in ranked.rows if row.meets_target)
    unsafe = dataclasses.replace(
        first, motors="a", total_impulse=first.total_impulse - 1.0, unsafe_ignition=True
    )
    safe = dataclasses.replace(first, motors="b", total_impulse=first.total_impulse)
    fake = dataclasses.replace(ranked, rows=type(ranked.rows)([unsafe, safe]))
    for criterion in ("least_impulse", "least_mass", "largest_margin"):
        assert [row.motors for row in fake.ranked_by(criterion).rows] == ["b", "a"]


def test_ties_are_broken_by_total_impulse(ranked: PickResult) -> None:
    first = next(row for row in ranked.rows if row.meets_target)
    heavy = dataclasses.replace(first, motors="b", total_impulse=first.total_impulse + 1.0)
    light = dataclasses.replace(first, motors="a", total_impulse=first.total_impulse)
    fake = dataclasses.replace(ranked, rows=type(ranked.rows)([heavy, light]))
    for criterion in ("least_mass", "nearest_apogee", "largest_margin"):
        assert [row.motors for row in fake.ranked_by(criterion).rows] == ["a", "b"]


# --- the chosen stack -----------------------------------------------------------------------


def test_the_best_hobby_stack_reaches_the_target_when_flown_again() -> None:
    mission = load_mission(HOBBY)
    result = pick(mission)  # every shipped motor that fits 54 mm, one per stage
    best = result.best
    assert best is not None and best.rank == 1
    # Fly it again from the mission text with the motor written in by hand.
    ((motor, count, _),) = best.choice
    text = HOBBY.read_text(encoding="utf-8").replace('name = "pd-H113"', f'name = "{motor}"')
    text = text.replace("[stage.motor]", f"[stage.motor]\ncount = {count}")
    flight = fly(parse_mission(text, source=str(HOBBY), base_dir=MISSIONS), margin=False)
    assert flight.apogee >= 1000.0  # the mission's target: 1 km above the site
    assert flight.apogee == pytest.approx(best.apogee, rel=1e-9)
    # least total impulse: every stack with less impulse was pruned or falls short
    for row in result.rows:
        if row.total_impulse < best.total_impulse:
            assert not row.meets_target


def test_progress_and_frame(hobby_small: PickResult) -> None:
    calls: list[tuple[int, int]] = []
    result = pick(
        hobby_small.mission,
        ["pd-G58", "pd-H113"],
        target_apogee=300.0,
        progress=lambda done, total: calls.append((done, total)),
    )
    assert calls == [(i, result.flown) for i in range(1, result.flown + 1)]
    frame = result.to_frame()
    for column in ("motors", "total_impulse_n_s", "liftoff_mass_kg", "rail_exit_speed_m_s"):
        assert column in frame.columns
    assert list(frame["apogee_m"]) == [row.apogee for row in result.rows]


# --- bad input ------------------------------------------------------------------------------


def test_bad_requests_raise_pick_errors(tmp_path: Path) -> None:
    two = load_mission(TWO_STAGE)
    with pytest.raises(PickError, match="did you mean 'pd-H113'"):
        pick(two, ["pd-H11"])
    with pytest.raises(PickError, match="from 1 to 2"):
        pick(two, ["pd-H113"], stage_counts=(1, 3))
    with pytest.raises(PickError, match="did you mean 'least_mass'"):
        pick(two, ["pd-H113"], criterion="least-mas")
    with pytest.raises(PickError, match="from 1 to 4"):
        pick(two, ["pd-H113"], max_cluster=5)
    with pytest.raises(PickError, match="holds no thrust curves"):
        pick(two, tmp_path)
    with pytest.raises(MissionFileNotFoundError):
        pick(two, tmp_path / "missing")
    with pytest.raises(PickError, match="engine stage"):
        pick(load_mission(MISSIONS / "orbital_launcher.toml"))
    legless = HOBBY.read_text(encoding="utf-8").split("[[leg]]")[0]
    mission = parse_mission(legless, source=str(HOBBY), base_dir=MISSIONS)
    with pytest.raises(PickError, match="no \\[\\[leg\\]\\]"):
        pick(mission, ["pd-H113"])
    assert pick(mission, ["pd-H113"], target_apogee=500.0).meeting == 1


def test_pick_error_pickles_and_is_a_value_error() -> None:
    error = PickError("no shipped motor is called 'x'", "a name")
    copy = pickle.loads(pickle.dumps(error))
    assert type(copy) is PickError and str(copy) == str(error)
    assert isinstance(error, ValueError) and error.exit_code == 2


# --- the command ----------------------------------------------------------------------------


runner = CliRunner()


def test_cli_table_and_exit_code_0() -> None:
    args = ["pick", str(HOBBY), "--motors", "pd-G58,pd-H113,pd-I204"]
    result = runner.invoke(_cli(), args, env={"COLUMNS": "100"})
    assert result.exit_code == 0, result.output
    words = " ".join(result.stdout.split())
    for text in ("Motors:", "sustainer", "pd-H113", "Apogee", "Propulsion", "Flags", "PASS"):
        assert text in words
    # G58 is pruned (about 88 m/s of ideal delta-v, 140 m/s needed for 1 km); H113, I204 fly.
    assert "3 motor stacks fit the airframe; 1 pruned" in words
    assert "2 flown; 2 meet" in words
    assert "Safety caution" in result.stdout


def test_cli_json_keys() -> None:
    args = ["pick", str(HOBBY), "--motors", "pd-G58,pd-H113,pd-I204", "--json"]
    result = runner.invoke(_cli(), args)
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    assert data["safety_caution"] == SAFETY_CAUTION
    for key in ("enumerated", "pruned", "flown", "meeting", "criterion", "target_apogee_m"):
        assert key in data
    assert (data["enumerated"], data["pruned"], data["flown"]) == (3, 1, 2)
    keys = {
        "rank",
        "motors",
        "total_impulse_n_s",
        "impulse_class",
        "liftoff_mass_kg",
        "liftoff_thrust_to_weight",
        "rail_exit_speed_m_s",
        "max_mach",
        "apogee_m",
        "margin_m",
        "margin_fraction",
        "meets_target",
        "warning_count",
    }
    assert all(keys <= set(row) for row in data["candidates"])
    assert data["best"]["motors"] == "sustainer: pd-H113"


def test_cli_exit_codes_1_and_2() -> None:
    app = _cli()
    short = runner.invoke(app, ["pick", str(HOBBY), "--motors", "pd-G58"])
    assert short.exit_code == 1, short.output
    assert "SHORT" in short.stdout
    unknown = runner.invoke(app, ["pick", str(HOBBY), "--motors", "pd-G58,pd-H11"])
    assert unknown.exit_code == 2
    assert "did you mean 'pd-H113'" in unknown.stderr
    for bad in (["--stages", "2..1"], ["--stages", "x"], ["--stages", "2"], ["--apogee", "3 kg"]):
        assert runner.invoke(app, ["pick", str(HOBBY), *bad]).exit_code == 2, bad
    assert runner.invoke(app, ["pick", str(HOBBY), "--rank", "best"]).exit_code == 2


def test_stage_count_text() -> None:
    from propulsion.cli.pick import parse_motors, parse_stage_counts

    assert parse_stage_counts("1..2") == (1, 2)
    assert parse_stage_counts(" 2 ") == (2,)
    assert parse_stage_counts("1..3") == (1, 2, 3)
    with pytest.raises(PickError):
        parse_stage_counts("1-2")
    assert parse_motors("pd-G58, pd-H113") == ["pd-G58", "pd-H113"]
    assert parse_motors(str(MISSIONS)) == MISSIONS
    assert parse_motors(None) is None
