"""The screens of `compare` and `pick`, the flight picture and the report's inputs.

`compare`: row names that stay whole and distinct, ``--set`` and ``--target`` applied to
every file (bad input refused with exit code 2), the motor columns, and no best mark on
a tie or on round-off. `pick`: the stacks shown with their ideal budget, flight and three
margins, flags instead of thrust-to-weight and rail-exit columns, and an apogee target
that takes no rotation credit. The flight figure marks its events on a strip under the
time axis. The report has an inputs section. Every screen is rendered at 80 and 120
columns in SI and US units: no line over the width, no "(s)" plural, no blank first line.
"""

from __future__ import annotations

import dataclasses
import io
import json
import math
import re
from html.parser import HTMLParser
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from rich.console import Console
from typer.testing import CliRunner

from propulsion import catalog
from propulsion.ascent import RAIL_EXIT_SPEED_MIN, fly
from propulsion.cli import app
from propulsion.cli.compare import compare_view
from propulsion.cli.pick import pick_view
from propulsion.constants import EARTH_EQUATORIAL_RADIUS, EARTH_MU, EARTH_ROTATION_RATE
from propulsion.mission import load_mission
from propulsion.report.sheet import BEST_MARK
from propulsion.selection import PickResult, pick
from propulsion.studies.compare import CompareError, CompareResult, compare
from propulsion.thrust_curve import impulse_class
from propulsion.units import display_units

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
HOBBY = MISSIONS / "hobby_single_stage.toml"
TWO_STAGE = MISSIONS / "two_stage_competition.toml"
ORBITAL = MISSIONS / "orbital_launcher.toml"
LAUNCH_DAY = MISSIONS / "launch_day_team_motor.toml"
SCREENS = [(80, "si"), (80, "us"), (120, "si"), (120, "us")]
# "stage(s)": a plural left to the reader; "Time (s)" is the unit second, and stays
_PLURAL_S = re.compile(r"\w\(s\)")

runner = CliRunner()


def _run(*args: str, columns: int = 80) -> Any:
    return runner.invoke(app, list(args), env={"COLUMNS": str(columns)})


def _render(renderable: Any, width: int) -> str:
    out = io.StringIO()
    Console(file=out, width=width, color_system=None).print(renderable)
    return out.getvalue()


def _check_screen(text: str, width: int) -> None:
    """What every screen keeps to: the width, no "(s)" plural, no blank first line."""
    lines = text.splitlines()
    assert lines and lines[0].strip(), "the screen starts with a blank line"
    assert max(len(line.rstrip()) for line in lines) <= width
    assert not _PLURAL_S.search(text), _PLURAL_S.search(text)


# --- compare: names ---------------------------------------------------------------------


def _copy(tmp_path: Path, source: Path, name: str, edits: dict[str, str] | None = None) -> Path:
    text = source.read_text(encoding="utf-8")
    for old, new in (edits or {}).items():
        assert old in text, old
        text = text.replace(old, new)
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def test_compare_row_names_stay_whole_and_distinct_at_80_columns(tmp_path: Path) -> None:
    # two files whose missions share a long name, and a third whose long name differs only
    # at its end: cut to the column, all three would read "Thistle with the lo…"
    long = "Thistle with the long-burning demonstration motor variant"
    first = _copy(tmp_path, HOBBY, "first.toml", {'name = "Thistle"': f'name = "{long}"'})
    second = _copy(tmp_path, HOBBY, "second.toml", {'name = "Thistle"': f'name = "{long}"'})
    third = _copy(tmp_path, HOBBY, "third.toml", {'name = "Thistle"': f'name = "{long} B"'})
    paths = [str(first), str(second), str(third), str(TWO_STAGE)]
    data = json.loads(_run("compare", *paths, "--no-margin", "--json").stdout)
    names = [option["name"] for option in data["options"]]
    # the result keeps a unique name whole; repeated ones become the files' stems
    assert names == ["first", "second", f"{long} B", "Bramble"]
    shown = _run("compare", *paths, "--no-margin")
    assert shown.exit_code == 0, shown.output
    _check_screen(shown.stdout, 80)
    lines = shown.stdout.splitlines()
    rows = lines[lines.index(next(line for line in lines if "━" in line)) + 1 :][:4]
    assert not [line for line in rows if "…" in line], rows  # no name was cut
    # the long name gives way to its file's stem on the screen
    for name in ("first", "second", "third", "Bramble"):
        assert sum(line.startswith(f" {name} ") for line in rows) == 1, (name, rows)
    assert "third = " in " ".join(shown.stdout.split())  # and the note names its file


# --- compare: --set and --target --------------------------------------------------------


def test_compare_set_is_applied_to_every_file() -> None:
    plain = json.loads(_run("compare", str(HOBBY), str(TWO_STAGE), "--no-margin", "--json").stdout)
    result = _run(
        "compare", str(HOBBY), str(TWO_STAGE), "--no-margin", "--json",
        "--set", "vehicle.payload=0.3 kg", "--set", "launch.elevation=85 deg",
    )  # fmt: skip
    assert result.exit_code in (0, 1), result.output  # Thistle falls short with 0.3 kg
    changed = json.loads(result.stdout)
    # payloads in the files: Thistle 0.10 kg, Bramble 0.15 kg
    for before, after, payload in zip(
        plain["options"], changed["options"], (0.10, 0.15), strict=True
    ):
        added = after["liftoff_mass_kg"] - before["liftoff_mass_kg"]
        assert added == pytest.approx(0.3 - payload, rel=1e-12)
        assert after["apogee_m"] < before["apogee_m"]  # heavier and more tilted
    assert changed["changes"] == ["vehicle.payload = 0.3 kg", "launch.elevation = 85 deg"]
    shown = _run(
        "compare", str(HOBBY), str(TWO_STAGE), "--no-margin", "--set", "vehicle.payload=0.3 kg"
    )
    assert "vehicle.payload = 0.3 kg" in " ".join(shown.stdout.split())


@pytest.mark.parametrize(
    "setting, words",
    [
        ("vehicle.payload=0.3", "bare number"),  # a unit belongs there
        ("vehicle.payload=0.3 m", "vehicle.payload"),  # a length is not a mass
        ("vehicle.paylod=0.3 kg", "did you mean 'vehicle.payload'"),
        ("vehicle.payload", "FIELD=VALUE"),
        ("stage.booster.inert_mass=1 kg", "hobby_single_stage.toml"),  # no such stage there
        ("vehicle.payload=-1 kg", "hobby_single_stage.toml"),  # the loader refuses it
        ("stage.sustainer.motor.count=1.5", "whole number"),
    ],
)
def test_compare_set_refuses_bad_input_with_exit_code_2(setting: str, words: str) -> None:
    result = _run("compare", str(HOBBY), str(TWO_STAGE), "--no-margin", "--set", setting)
    assert result.exit_code == 2, result.output
    message = " ".join(result.stderr.split())
    assert words in message
    assert "Traceback" not in result.output


def test_compare_set_twice_on_one_field_is_refused() -> None:
    result = _run(
        "compare", str(HOBBY), "--no-margin",
        "--set", "vehicle.payload=0.3 kg", "--set", "vehicle.payload=0.4 kg",
    )  # fmt: skip
    assert result.exit_code == 2 and "twice" in result.stderr


def test_compare_target_moves_the_first_legs_target(tmp_path: Path) -> None:
    result = _run(
        "compare", str(HOBBY), str(TWO_STAGE), "--no-margin", "--json", "--target", "3 km"
    )
    assert result.exit_code in (0, 1), result.output
    data = json.loads(result.stdout)
    for option in data["options"]:
        # the target margin is the apogee less the new target, in metres
        assert option["margin_target"] == "apogee"
        assert option["margin"] == pytest.approx(option["apogee_m"] - 3000.0, rel=1e-12)
    assert data["options"][0]["meets_targets"] is False  # Thistle reaches about 1.1 km
    assert data["changes"] == ["first leg's target = 3 km"]
    # a burnout-speed target takes a speed
    speed = _copy(
        tmp_path,
        HOBBY,
        "speed.toml",
        {'target = "apogee"\naltitude = "1 km"': 'target = "burnout_speed"\nspeed = "150 m/s"'},
    )
    fast = json.loads(
        _run("compare", str(speed), "--no-margin", "--json", "--target", "100 m/s").stdout
    )
    (option,) = fast["options"]
    flown = fly(load_mission(speed), margin=False)
    assert option["margin"] == pytest.approx(flown.verdict.achieved - 100.0, rel=1e-9)


def test_compare_target_sets_an_orbit_altitude() -> None:
    from propulsion.studies.compare import apply_changes

    (changed,) = apply_changes([load_mission(ORBITAL)], (), "250 km")
    assert changed.legs[0].target == "circular_orbit"
    assert changed.legs[0].fields["altitude"] == pytest.approx(250e3, rel=1e-15)


@pytest.mark.parametrize(
    "target, words",
    [
        ("3000", "bare number"),
        ("3 kg", "neither a length nor a speed"),
        ("300 m/s", "hobby_single_stage.toml"),  # an apogee target takes a height
    ],
)
def test_compare_target_refuses_bad_input_with_exit_code_2(target: str, words: str) -> None:
    result = _run("compare", str(HOBBY), "--no-margin", "--target", target)
    assert result.exit_code == 2, result.output
    assert words in " ".join(result.stderr.split())


def test_compare_request_errors_are_compare_errors() -> None:
    from propulsion.studies.compare import apply_changes

    with pytest.raises(CompareError, match="FIELD=VALUE"):
        apply_changes([load_mission(HOBBY)], ["payload"], None)


# --- compare: motor columns and the best mark -------------------------------------------


@pytest.fixture(scope="module")
def examples() -> CompareResult:
    """Every example mission compared, with the margins (as the command does)."""
    return compare([load_mission(path) for path in sorted(MISSIONS.glob("*.toml"))])


def test_compare_shows_motor_impulse_and_class(examples: CompareResult) -> None:
    by_name = {row.name: row for row in examples.rows}
    # total impulse of the motors the files name (data/motors/*.csv, and the team's file)
    h113 = catalog.load_motor("pd-H113").total_impulse
    i204 = catalog.load_motor("pd-I204").total_impulse
    team = load_mission(LAUNCH_DAY).vehicle.stages[0].total_impulse
    for name, impulse in (("Thistle", h113), ("Bramble", h113 + i204), ("Wren", team)):
        assert by_name[name].total_impulse_n_s == pytest.approx(impulse, rel=1e-12)
        assert by_name[name].impulse_class == impulse_class(impulse)
    assert math.isnan(by_name["Lantern"].total_impulse_n_s)  # engines, no motor
    assert by_name["Lantern"].impulse_class is None
    text = _render(compare_view(examples, display_units("si"), None, 120), 120)
    assert "Impulse" in text and "class" in text


@pytest.mark.parametrize("width, system", SCREENS)
def test_compare_screens_fit(examples: CompareResult, width: int, system: str) -> None:
    _check_screen(_render(compare_view(examples, display_units(system), None, width), width), width)


def _marked(text: str, names: list[str]) -> dict[str, int]:
    """How many best marks each option's table line carries."""
    lines = text.splitlines()
    return {name: next(line for line in lines if line.startswith(f" {name} ")).count(BEST_MARK)
            for name in names}  # fmt: skip


def test_no_best_mark_on_a_tie_or_on_round_off(examples: CompareResult) -> None:
    rows = list(examples.rows[:3])
    names = [row.name for row in rows]
    # apogees that print alike (1,114 m to four figures) tie; steering losses of round-off
    # (1e-15 against -7e-15 m/s) are no loss at all
    tie = [
        dataclasses.replace(rows[0], apogee_m=1114.2, steering_loss_m_s=1e-15),
        dataclasses.replace(rows[1], apogee_m=1114.3, steering_loss_m_s=-7e-15),
        dataclasses.replace(rows[2], apogee_m=900.0, steering_loss_m_s=0.0),
    ]
    result = dataclasses.replace(examples, rows=tuple(tie))
    units = display_units("si")
    apogee = _render(compare_view(result, units, ["name", "apogee_m"], 80), 80)
    assert _marked(apogee, names) == {names[0]: 1, names[1]: 1, names[2]: 0}
    steering = _render(compare_view(result, units, ["name", "steering_loss_m_s"], 80), 80)
    assert _marked(steering, names) == dict.fromkeys(names, 0)
    two = dataclasses.replace(result, rows=tuple(tie[:2]))
    apogee = _render(compare_view(two, units, ["name", "apogee_m"], 80), 80)
    assert _marked(apogee, names[:2]) == dict.fromkeys(names[:2], 0)  # a tie: nothing to choose


def test_compare_command_starts_with_its_table() -> None:
    result = _run(
        "compare", *(str(path) for path in sorted(MISSIONS.glob("*.toml"))), "--no-margin"
    )
    assert result.exit_code == 0, result.output
    assert result.stderr == ""  # no progress residue on a pipe
    _check_screen(result.stdout, 80)


# --- pick ---------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def hobby_pick() -> PickResult:
    return pick(load_mission(HOBBY))


@pytest.fixture(scope="module")
def windy_pick() -> PickResult:
    """Wren's site: latitude 35 deg, azimuth 250 deg (the ground turns at 381 m/s there)."""
    return pick(load_mission(LAUNCH_DAY))


@pytest.mark.parametrize("width, system", SCREENS)
def test_pick_screen_leads_with_budget_flight_and_margins(
    hobby_pick: PickResult, width: int, system: str
) -> None:
    text = _render(pick_view(hobby_pick, display_units(system)), width)
    _check_screen(text, width)
    words = " ".join(text.split())
    assert "Motor stacks for Thistle: ideal budget, flight and margins" in words
    for heading in ("Ideal", "Apogee", "Target", "Propulsion", "Payload", "Flags"):
        assert heading in text, heading
    assert "T/W " not in text.split("━")[0]  # no thrust-to-weight column any more
    assert "combination" not in words


def test_pick_margins_are_the_flights_margins(hobby_pick: PickResult) -> None:
    assert hobby_pick.meeting >= 1
    for row in hobby_pick.rows:
        if row.meets_target:
            verdict = fly(row.mission, margin=True).verdict
            assert row.propulsion_margin == pytest.approx(verdict.propulsion_margin, rel=1e-9)
            assert row.payload_margin == pytest.approx(verdict.payload_margin, rel=1e-9)
            assert row.margin == pytest.approx(verdict.target_margin, rel=1e-9)
        else:  # margins are found for the stacks that meet the target only
            assert math.isnan(row.propulsion_margin) and math.isnan(row.payload_margin)
    data = hobby_pick.to_dict()["candidates"][0]
    for key in ("propulsion_margin_fraction", "propulsion_margin_m_s", "payload_margin_kg"):
        assert key in data
    assert data["flags"] == list(hobby_pick.rows[0].flags)


def test_pick_flags_follow_the_plausibility_rules() -> None:
    # a 300 m target lets the slow G58 fly beside the H113 (Thistle's airframe)
    result = pick(load_mission(HOBBY), ["pd-F43", "pd-G58", "pd-H113"], target_apogee=300.0)
    families = catalog.propellant_families()
    flagged = set()
    for row in result.rows:
        (stage,) = row.mission.vehicle.stages
        minimum = families[stage.propulsion.propellant_family].liftoff_thrust_to_weight_min
        low_thrust = 1.0 <= row.liftoff_thrust_to_weight < minimum
        assert ("thrust_to_weight" in row.flags) == low_thrust, row.motors
        assert ("rail_exit" in row.flags) == (row.rail_exit_speed < RAIL_EXIT_SPEED_MIN)
        flagged.update(row.flags)
    assert {"thrust_to_weight", "rail_exit"} <= flagged  # the G58 leaves the rail slowly
    assert any(not row.flags for row in result.rows)
    for system in ("si", "us"):
        units = display_units(system)
        text = " ".join(_render(pick_view(result, units), 80).split())
        # 1 ft = 0.3048 m exactly (international yard and pound agreement, 1959)
        limit = f"{RAIL_EXIT_SPEED_MIN / (1.0 if system == 'si' else 0.3048):.0f}"
        assert f"rail<{limit} " in text and f"below {limit} {units.label('speed')}" in text
        minimum = {row.thrust_to_weight_minimum for row in result.rows if row.flags}
        assert {f"T/W<{value:g} " in text for value in minimum} == {True}
        assert " ok " in text


def test_an_apogee_target_takes_no_rotation_credit(windy_pick: PickResult) -> None:
    # A vertical climb keeps its share of the ground's turning speed as sideways speed; all
    # it gains is the centrifugal potential of its latitude (35 deg), by the energy law in
    # the rotating frame: v² = 2μ(1/r0 − 1/ra) − ω² cos²φ (ra² − r0²)
    # (H. D. Curtis, Orbital Mechanics for Engineering Students, 3rd ed., 2013, eq. 2.80,
    # with the rotating frame's centrifugal potential).
    mission = windy_pick.mission
    r0 = EARTH_EQUATORIAL_RADIUS + mission.launch.altitude
    ra = r0 + 2500.0
    assert mission.launch.latitude is not None
    spin = (EARTH_ROTATION_RATE * math.cos(mission.launch.latitude)) ** 2 * (ra**2 - r0**2)
    need = math.sqrt(2.0 * EARTH_MU * (1.0 / r0 - 1.0 / ra) - spin)
    assert windy_pick.drag_free_delta_v == pytest.approx(need, rel=1e-12)
    assert need > 200.0
    # the bound stays a bound: no stack pruned for its delta-v climbs above it when flown
    # (those too heavy to lift off reach no apogee at all)
    assert windy_pick.pruned["delta_v"] >= 1
    for pruned in windy_pick.pruned_rows:
        if pruned.reason == "delta_v":
            apogee = fly(pruned.mission, margin=False).apogee
            assert not apogee > pruned.apogee_bound, pruned.motors
            assert pruned.apogee_bound < 2500.0
    text = " ".join(_render(pick_view(windy_pick, display_units("si")), 80).split())
    assert "drag-free 0 m/s" not in text


def test_pick_command_starts_with_its_mission() -> None:
    result = _run("pick", str(HOBBY))
    assert result.exit_code == 0, result.output
    assert result.stderr == ""
    _check_screen(result.stdout, 80)
    assert re.search(r"\b7 motor stacks fit the airframe\b", " ".join(result.stdout.split()))


def test_a_failed_pick_screen_fits_and_lists_the_closest() -> None:
    result = _run("pick", str(HOBBY), "--motors", "pd-G58,pd-H113", "--apogee", "1.3 km")
    assert result.exit_code == 1
    _check_screen(result.stdout, 80)
    assert "Closest stacks" in result.stdout


# --- the flight picture -------------------------------------------------------------------


@pytest.fixture(scope="module")
def bramble_flight() -> Any:
    return fly(load_mission(TWO_STAGE), margin=False)


def test_flight_events_sit_on_a_strip_not_across_the_panels(bramble_flight: Any) -> None:
    pytest.importorskip("matplotlib")
    from propulsion.report import plots

    figure = plots.flight_figure(bramble_flight, display_units("si"))
    strips = [ax for ax in figure.axes if ax.get_gid() == "event_strip"]
    assert len(strips) == 1
    strip = strips[0]
    panels = [ax for ax in figure.axes if ax is not strip]
    # no event line crosses a data panel
    for ax in panels:
        assert not [line for line in ax.lines if str(line.get_gid()).startswith("event:")]
    times = {event.name: event.time for event in bramble_flight.events}
    for name in ("rail exit", "booster burnout", "sustainer ignition", "apogee"):
        (tick,) = [line for line in strip.lines if line.get_gid() == f"event:{name}"]
        assert tick.get_xdata()[0] == times[name]
    # the strip lies under the time panels and is short
    lowest = min(ax.get_position().y0 for ax in panels[:5])
    assert strip.get_position().y1 <= lowest + 1e-9
    assert strip.get_position().height < 0.1
    # labels are horizontal and kept apart (booster burnout and separation are 0.2 s apart)
    canvas = figure.canvas
    canvas.draw()
    renderer = canvas.get_renderer()  # type: ignore[attr-defined]
    boxes = [text.get_window_extent(renderer) for text in strip.texts if text.get_text()]
    assert len(boxes) >= 5 and all(text.get_rotation() == 0 for text in strip.texts)
    for i, a in enumerate(boxes):
        for b in boxes[i + 1 :]:
            assert not a.overlaps(b), (a, b)


def test_inertial_speed_is_drawn_only_where_it_differs(bramble_flight: Any) -> None:
    pytest.importorskip("matplotlib")
    from propulsion.report import plots

    frame = bramble_flight.trajectory
    ground = frame["speed_m_s"].to_numpy()
    inertial = frame["inertial_speed_m_s"].to_numpy()
    # no rotation at Bramble's site: the two speeds lie within 1 % of the panel's top
    assert np.max(np.abs(inertial - ground)) < 0.01 * np.max(np.abs(ground))
    figure = plots.flight_figure(bramble_flight, display_units("si"))
    assert not [
        line for ax in figure.axes for line in ax.lines if line.get_gid() == "inertial_speed"
    ]
    texts = " ".join(text.get_text() for ax in figure.axes for text in ax.texts)
    assert "inertial speed lies on this line" in texts
    # Lantern's site turns at about 366 m/s (latitude 38 deg): the lines stand apart
    orbital = fly(load_mission(ORBITAL), margin=False)
    figure = plots.flight_figure(orbital, display_units("si"))
    (line,) = [
        line for ax in figure.axes for line in ax.lines if line.get_gid() == "inertial_speed"
    ]
    np.testing.assert_array_equal(line.get_ydata(), orbital.trajectory["inertial_speed_m_s"])


# --- the report ---------------------------------------------------------------------------


class _Rows(HTMLParser):
    """Table rows of the report: each cell's class, data-key and text; sections' images."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.rows: list[tuple[str, list[dict[str, str]]]] = []
        self.images: dict[str, int] = {}
        self._caption = ""
        self._row: list[dict[str, str]] | None = None
        self._cell: dict[str, str] | None = None
        self._in_caption = False
        self._section = ""

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        values = {name: value or "" for name, value in attrs}
        if tag == "section":
            self._section = values.get("id", "")
        if tag == "img":
            self.images[self._section] = self.images.get(self._section, 0) + 1
        if tag == "caption":
            self._in_caption, self._caption = True, ""
        if tag == "tr":
            self._row = []
        if tag in ("td", "th") and self._row is not None:
            self._cell = {"class": values.get("class", ""), "key": values.get("data-key", "")}
            self._cell["text"] = ""

    def handle_endtag(self, tag: str) -> None:
        if tag == "caption":
            self._in_caption = False
        if tag in ("td", "th") and self._row is not None and self._cell is not None:
            self._row.append(self._cell)
            self._cell = None
        if tag == "tr" and self._row is not None:
            self.rows.append((self._caption, self._row))
            self._row = None

    def handle_data(self, data: str) -> None:
        if self._in_caption:
            self._caption += data
        if self._cell is not None:
            self._cell["text"] += data


# JSON keys end in their SI unit (README: "JSON keys"); a row holding such a number must
# name its unit
_UNIT_SUFFIX = re.compile(r"_(m|m_s|kg|s|n|n_s|pa|g|k|deg|rad)$")


@pytest.fixture(scope="module", params=["si", "us"])
def reports(request: pytest.FixtureRequest) -> dict[str, str]:
    from propulsion.report.html import build_report

    units = display_units(request.param)
    return {
        path.stem: build_report(load_mission(path), units, dispersion_samples=8)
        for path in (HOBBY, TWO_STAGE, LAUNCH_DAY)
    }


def test_report_has_an_inputs_section_with_every_thrust_curve(reports: dict[str, str]) -> None:
    for stem, html in reports.items():
        mission = load_mission(MISSIONS / f"{stem}.toml")
        parsed = _Rows()
        parsed.feed(html)
        inputs = html.split('<section id="inputs">', 1)[1].split("</section>", 1)[0]
        motors = [stage for stage in mission.vehicle.stages if stage.is_motor]
        # one thrust-curve picture per motor stage, and the drag curve
        assert parsed.images["inputs"] == len(motors) + 1
        for stage in motors:
            assert f"Thrust curve of stage {stage.name}" in inputs
            assert stage.propulsion.name in inputs
        assert "slender_finned" in inputs and "Drag scale" in inputs
        assert "Payload" in inputs and "Inert mass" in inputs and "Diameter" in inputs
    assert "standard" in reports["hobby_single_stage"].split('id="inputs"')[1].lower()
    day = reports["launch_day_team_motor"].split('<section id="inputs">')[1].split("</section>")[0]
    assert "launch_day_sounding.csv" in day and "team-54J.csv" in day
    assert "Wind" in day


def test_report_rows_name_their_units_and_labels_once(reports: dict[str, str]) -> None:
    for stem, html in reports.items():
        parsed = _Rows()
        parsed.feed(html)
        labels: dict[str, list[str]] = {}
        for caption, row in parsed.rows:
            units = [cell for cell in row if "unit" in cell["class"].split()]
            keyed = [cell["key"] for cell in row if cell["key"]]
            if units and any(_UNIT_SUFFIX.search(key) for key in keyed):
                assert units[0]["text"].strip(), (stem, caption, row[0]["text"])
            if row and row[0]["text"] and units:
                labels.setdefault(caption, []).append(row[0]["text"])
        for caption, names in labels.items():
            repeated = {name for name in names if names.count(name) > 1}
            assert not repeated, (stem, caption, repeated)
        assert not _PLURAL_S.search(html), _PLURAL_S.search(html)


def test_report_states_the_leg_margin_once() -> None:
    from propulsion.report.html import build_report

    html = build_report(load_mission(ORBITAL), display_units("si"))
    parsed = _Rows()
    parsed.feed(html)
    legs = [row for caption, row in parsed.rows if caption.startswith("Mission legs")]
    assert legs
    margins = [row for row in legs if row[0]["text"].startswith("Margin")]
    assert not margins  # every leg has the same margin: it is said once, under the table
    assert html.count('data-key="legs.0.margin_m_s"') == 1
