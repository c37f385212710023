"""Every screen reads cleanly in a terminal of 80 and of 120 columns, in SI and US units.

Each command runs on each example mission (through typer's CliRunner, the terminal's width
set by ``COLUMNS`` as a shell sets it) and its text is checked for the faults a reader
trips on:

* a line wider than the terminal;
* a word broken across two lines, or cut short with "…" (see :func:`broken_words`);
* a number in scientific notation (``6.77e-09``): the screens print round-off as 0 and
  other numbers in plain decimals;
* a plural written as "(s)" ("stage(s)");
* a space before a percent sign (the screens write "12.3%");
* a blank first line;
* a missing verdict (the PASS/SHORT line, or the verdict column of a table).

The runners' results are kept between the widths and the unit systems (:func:`memo`): a
screen only renders differently, the numbers are the same. Rendering the same command
at :data:`WIDE` columns gives the reference the broken-word check compares against.
"""

from __future__ import annotations

import itertools
import json
import re
import tomllib
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest
from rich.cells import cell_len
from typer.testing import CliRunner

from propulsion.cli import app

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
EXAMPLES = sorted(MISSIONS.glob("*.toml"))
WIDTHS = (80, 120)
WIDE = 400
"""Columns of the reference rendering, in which no table cell and no line wraps."""
UNITS = ("si", "us")
VERDICT_MARKS = ("PASS", "SHORT", "LOW MARGIN", "OFF TARGET", "FAILED", "NO TARGET")

runner = CliRunner()

_SCIENTIFIC = re.compile(r"(?<![\w.])[-+−]?\d+(?:\.\d+)?[eE][-+]?\d+(?![\w.])")
_PLURAL_S = re.compile(r"[A-Za-z]\(s\)")
_SPACED_PERCENT = re.compile(r"\d %")


# ---------------------------------------------------------------------------------------
# the runners' results, kept between renderings


def _key(value: Any) -> Any:
    """A hashable stand-in for a runner's argument: a mission by its checked document (a
    changed copy is another mission), callables left out (progress reports)."""
    from propulsion.mission import Mission

    if isinstance(value, Mission):
        return ("mission", value.source, json.dumps(value.document, sort_keys=True, default=str))
    if isinstance(value, list | tuple):
        return tuple(_key(item) for item in value)
    if callable(value):
        return "callable"
    return repr(value)


def _memoised(function: Callable[..., Any], store: dict[Any, Any]) -> Callable[..., Any]:
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        key = (
            function.__module__,
            function.__name__,
            _key(args),
            tuple(sorted((k, _key(v)) for k, v in kwargs.items())),
        )
        if key not in store:
            store[key] = function(*args, **kwargs)
        return store[key]

    return wrapper


@pytest.fixture(scope="module", autouse=True)
def memo() -> Iterator[None]:
    """The slow runners answer each distinct question once for the whole module: a
    screen at another width or in other units shows the same result."""
    import propulsion.ascent
    import propulsion.selection
    import propulsion.sizing
    import propulsion.stage_split
    import propulsion.studies.compare
    import propulsion.studies.scatter
    import propulsion.studies.sweep

    store: dict[Any, Any] = {}
    patch = pytest.MonkeyPatch()
    for module, name in (
        (propulsion.ascent, "fly"),
        (propulsion.sizing, "size"),
        (propulsion.stage_split, "split"),
        (propulsion.studies.compare, "compare"),
        (propulsion.studies.sweep, "sweep"),
        (propulsion.studies.scatter, "scatter"),
        (propulsion.selection, "pick"),
    ):
        patch.setattr(module, name, _memoised(getattr(module, name), store))
    yield
    patch.undo()


# ---------------------------------------------------------------------------------------
# the checks


def render(args: list[str], width: int) -> tuple[int, str]:
    """The command's exit code and its text (standard output and error) at ``width``."""
    result = runner.invoke(app, args, env={"COLUMNS": str(width)})
    if result.exception is not None and not isinstance(result.exception, SystemExit):
        raise result.exception
    return result.exit_code, result.output


_TOKEN = re.compile(r"\S+")


def _tokens(line: str) -> list[tuple[int, int, str]]:
    """Whitespace-separated pieces of a line with their start and end columns."""
    return [(m.start(), m.end(), m.group()) for m in _TOKEN.finditer(line)]


def broken_words(text: str, reference: str) -> list[str]:
    """Words of ``text`` broken across two lines or cut short with "…".

    The heuristic: a piece at the end of a cell's line that ends in a letter, and the piece
    at the start of the cell's next line that begins with a letter (the same cell: the
    two overlap in columns, or the first ends its line and the second begins the next),
    are one word broken in two when, joined without a space, they make a word that the
    reference rendering (the same screen, wide enough for nothing to wrap) shows whole,
    and they are not both words of the reference themselves. Two whole words next to each
    other ("mass" / "fraction") never join into a word of the reference, so ordinary
    wrapping at spaces passes. A piece with "…" that the reference does not show is a word
    cut short.
    """
    whole = set(_TOKEN.findall(reference))
    found = []
    lines = text.splitlines()
    for upper, lower in itertools.pairwise(lines):
        above, below = _tokens(upper), _tokens(lower)
        for index, (start, end, piece) in enumerate(above):
            if not piece[-1].isalpha():
                continue
            for other_index, (start2, end2, rest) in enumerate(below):
                if not rest[0].isalpha():
                    continue
                same_cell = start < end2 and start2 < end
                wrapped = index == len(above) - 1 and other_index == 0
                # two pieces that are both whole words of the reference ("m" and "m" of
                # two cells, one above the other) are taken as two words
                two_words = piece in whole and rest in whole
                if (same_cell or wrapped) and piece + rest in whole and not two_words:
                    found.append(f"{piece}|{rest}")
    for piece in _TOKEN.findall(text):
        if "…" in piece and piece not in whole:
            found.append(piece)
    return found


def problems(text: str, width: int, reference: str) -> list[str]:
    """Everything the module checks for in one screen, as messages (empty: clean)."""
    found = []
    lines = text.splitlines()
    if lines and not lines[0].strip():
        found.append("the first line is blank")
    for number, line in enumerate(lines, 1):
        if cell_len(line) > width:
            found.append(f"line {number} is {cell_len(line)} columns wide: {line.strip()!r}")
    found += [f"broken word {word!r}" for word in broken_words(text, reference)]
    found += [f"scientific notation {m!r}" for m in _SCIENTIFIC.findall(text)]
    found += [f"'(s)' plural in {m!r}" for m in _PLURAL_S.findall(text)]
    found += [f"space before a percent sign: {m!r}" for m in _SPACED_PERCENT.findall(text)]
    return found


def has_verdict_line(text: str) -> bool:
    """A line that begins with a verdict's mark (PASS, SHORT, ...)."""
    return any(line.startswith(VERDICT_MARKS) for line in text.splitlines())


def check_screens(args: list[str], verdict: Callable[[str], bool] | None) -> None:
    """Render ``args`` at each width of :data:`WIDTHS` and fail with every problem found.

    ``verdict`` tells whether a screen shows its verdict (None: the command has none).
    """
    code, reference = render(args, WIDE)
    if code == 2:
        raise AssertionError(f"{' '.join(args)} refused: {reference}")
    report = []
    for width in WIDTHS:
        _, text = render(args, width)
        found = problems(text, width, reference)
        if verdict is not None and not verdict(text):
            found.append("no verdict shown")
        if found:
            report.append(f"at {width} columns:\n  " + "\n  ".join(found) + "\n" + text)
    assert not report, f"{' '.join(args)}\n" + "\n".join(report)


# ---------------------------------------------------------------------------------------
# the commands on the examples


def _document(path: Path) -> dict[str, Any]:
    return tomllib.loads(path.read_text(encoding="utf-8"))


def _first_stage(path: Path) -> str:
    return str(_document(path)["stage"][0]["name"])


def _payload_span(path: Path) -> str:
    """A three-point sweep of the payload from the file's value to 20 % more."""
    number, unit = str(_document(path)["vehicle"]["payload"]).split()
    value = float(number)
    return f"vehicle.payload={value:g} {unit}..{1.2 * value:g} {unit}:3"


def _has_dispersions(path: Path) -> bool:
    return bool(_document(path).get("dispersion"))


def _engines_only(path: Path) -> bool:
    return all("engine" in stage for stage in _document(path)["stage"])


CASES = [
    pytest.param(path, units, id=f"{path.stem}-{units}") for path in EXAMPLES for units in UNITS
]


def _sweep_meets(text: str) -> bool:
    """The sweep's table keeps its verdict column ('Flight meets')."""
    return bool(re.search(r"\bmeets\b", text)) and bool(re.search(r"\b(yes|no)\b", text))


@pytest.mark.parametrize(("path", "units"), CASES)
def test_budget_screens(path: Path, units: str) -> None:
    check_screens(["budget", str(path), "-u", units], has_verdict_line)


@pytest.mark.parametrize(("path", "units"), CASES)
def test_fly_screens(path: Path, units: str) -> None:
    check_screens(["fly", str(path), "-u", units], has_verdict_line)


@pytest.mark.parametrize(("path", "units"), CASES)
def test_check_screens(path: Path, units: str) -> None:
    check_screens(["check", str(path), "-u", units], None)


@pytest.mark.parametrize(("path", "units"), CASES)
def test_size_screens(path: Path, units: str) -> None:
    vary = f"stage.{_first_stage(path)}.inert_mass"
    check_screens(["size", str(path), "--vary", vary, "-u", units], has_verdict_line)


@pytest.mark.parametrize(("path", "units"), CASES)
def test_split_screens(path: Path, units: str) -> None:
    if not _engines_only(path):
        pytest.skip("split refuses a vehicle on motors (a motor's size is fixed)")
    check_screens(["split", str(path), "-u", units], None)


@pytest.mark.parametrize(("path", "units"), CASES)
def test_scatter_screens(path: Path, units: str) -> None:
    if not _has_dispersions(path):
        pytest.skip("scatter needs [[dispersion]] tables; this example has none")

    def verdict(text: str) -> bool:
        return "Probability of meeting" in text

    check_screens(["scatter", str(path), "-n", "200", "-u", units], verdict)


@pytest.mark.parametrize(("path", "units"), CASES)
def test_sweep_screens(path: Path, units: str) -> None:
    check_screens(["sweep", str(path), "--set", _payload_span(path), "-u", units], _sweep_meets)


@pytest.mark.parametrize("units", UNITS)
def test_data_screens(units: str) -> None:
    check_screens(["data", "-u", units], None)


@pytest.mark.parametrize("units", UNITS)
def test_pick_screens(units: str) -> None:
    check_screens(
        ["pick", str(MISSIONS / "hobby_single_stage.toml"), "-u", units], has_verdict_line
    )


@pytest.mark.parametrize("units", UNITS)
def test_compare_screens(units: str) -> None:
    def verdict(text: str) -> bool:
        return has_verdict_line(text) and bool(re.search(r"\bmeets\b", text))

    check_screens(["compare", *map(str, EXAMPLES), "-u", units], verdict)


# ---------------------------------------------------------------------------------------
# the help screens

COMMANDS = [
    *("budget", "fly", "check", "size", "split", "scatter", "sweep", "data"),
    *("capacity", "firing", "report", "pick", "compare", "worksheet"),
]


def _description(text: str) -> list[str]:
    """The help's prose: the lines after the usage line and before the first panel."""
    lines = text.splitlines()
    start = next(i for i, line in enumerate(lines) if "Usage:" in line) + 1
    end = next((i for i, line in enumerate(lines) if line.startswith("╭")), len(lines))
    return lines[start:end]


@pytest.mark.parametrize("command", [None, *COMMANDS])
def test_help_screens(command: str | None) -> None:
    args = ["--help"] if command is None else [command, "--help"]
    code, text = render(args, 80)
    assert code == 0, text
    found = [
        f"line {i}: {line!r}" for i, line in enumerate(text.splitlines()) if cell_len(line) > 80
    ]
    # a flag takes no value: no "<bool>" placeholder
    found += ["a <bool> placeholder"] if "<bool>" in text else []
    # rich markup must not eat a mission file's table name ("no [] tables")
    found += ["an eaten [[...]] table name"] if "[]" in text else []
    # a paragraph wraps where the terminal ends, not where the docstring's line ended: a
    # line followed by a word of the same paragraph that would have fitted on it
    prose = _description(text)
    for upper, lower in itertools.pairwise(prose):
        words = lower.split()
        if upper.strip() and words and cell_len(upper.rstrip()) + 1 + cell_len(words[0]) < 79:
            found.append(f"paragraph broken after {upper.strip()!r}")
    assert not found, "\n".join(found) + "\n" + text
    if command is not None and command != "data":
        # every mission file argument shows as written
        assert "MISSION.toml" in text or "LOG" in text


# ---------------------------------------------------------------------------------------
# the rules behind the screens, one by one


def test_a_column_shares_one_count_of_decimals() -> None:
    from propulsion.units import format_column

    # the events' Mach column of the launch-day example: three decimals for all, from the
    # largest's three significant figures, never "0.0114" beside "21.1"
    assert format_column([0.0114, 21.1, 0.996], 3) == ["0.0", "21.1", "1.0"]
    assert format_column([0.0114, 0.0979, 0.913], 3) == ["0.011", "0.098", "0.913"]
    # round-off within the tolerance is 0, and no number is in scientific notation
    assert format_column([9.3e-7, 2.993, 2933.0], 4, zero=3e-5) == ["0", "3", "2,933"]
    assert "e" not in "".join(format_column([1e-12, 3e-12]))
    # a value that rounds to nothing is 0.0 (small), never -0.0
    assert format_column([-0.00004, 3.4], 2) == ["0.0", "3.4"]
    # zeros the values do not have are left out: 10 from "10 m/s", 312 from "312 s"
    assert format_column([0.0, 10.0]) == ["0", "10"]
    assert format_column([312.0, 340.0]) == ["312", "340"]
    assert format_column([1.0004]) == ["1.000"]  # a computed value keeps its figures
    assert format_column([float("nan"), 1.5]) == ["—", "1.5"]


def test_running_text_has_no_false_precision() -> None:
    from propulsion.units import display_units, format_plain, to_display

    # 30 g is 0.03 kg, not 0.03000 kg; 10 m is 32.81 ft (a conversion's own figures)
    assert format_plain(0.03) == "0.03"
    assert format_plain(to_display(10.0, "length", display_units("us"))) == "32.81"
    assert format_plain(1_234_567.8) == "1,234,568"
    assert format_plain(6.77e-9, zero=1e-6) == "0"


def test_plural_writes_the_word_in_the_right_number() -> None:
    from propulsion.text import plural

    assert plural(1, "stage") == "1 stage"
    assert plural(0, "sample") == "0 samples"
    assert plural(1000, "flight") == "1,000 flights"
    assert plural(2, "ellipse", "ellipses") == "2 ellipses"


def test_round_off_earns_no_star() -> None:
    import pandas as pd

    from propulsion.report.sheet import BEST_MARK, sheet_table
    from propulsion.units import display_units

    # perigees that differ by centimetres: the same figure on the screen, no best one
    frame = pd.DataFrame({"name": ["a", "b"], "perigee_m": [656_167.1, 656_167.3]})
    columns = {"name": ("Option", None, None), "perigee_m": ("Perigee", "length", "max")}
    table = sheet_table(frame, columns, "t", display_units("si"))
    cells = [str(cell) for cell in table.columns[1].cells]
    assert cells == ["656,167", "656,167"]
    # a difference the screen shows is marked
    frame["perigee_m"] = [656_167.1, 656_180.0]
    table = sheet_table(frame, columns, "t", display_units("si"))
    assert [str(cell) for cell in table.columns[1].cells] == ["656,167", f"{BEST_MARK}656,180"]


def test_help_paragraphs_are_rewrapped_and_plain() -> None:
    from propulsion.cli import plain_help

    text = plain_help(
        "First line.\n\nOne paragraph\nover two lines, [[dispersion]].\n\n\b\nkept\nas is"
    )
    assert text is not None
    assert "One paragraph over two lines, [\\[dispersion]]." in text
    assert text.endswith("kept\nas is")
