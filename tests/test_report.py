"""The reviewer's report: one self-contained HTML file whose numbers are the JSON's numbers.

The report of a run is checked against the ``--json`` output of ``fly``, ``budget`` and
``scatter`` for the same mission (every keyed number, exactly), parsed with the standard
library's HTML parser, checked for self-containment (no links to other sites; images are
PNG data URIs that decode), and opened in a real headless Chromium.
"""

from __future__ import annotations

import base64
import json
import math
import os
import shutil
import struct
import zlib
from dataclasses import dataclass
from html.parser import HTMLParser
from pathlib import Path
from typing import Any

import pytest
import typer
from typer.testing import CliRunner

from propulsion import __version__
from propulsion.cli import app
from propulsion.cli.report import report_command
from propulsion.report.cautions import SAFETY_CAUTION, SAFETY_TITLE
from propulsion.units import format_number

MISSIONS = Path(__file__).resolve().parent.parent / "missions"
COMPETITION = MISSIONS / "two_stage_competition.toml"
HOBBY = MISSIONS / "hobby_single_stage.toml"
SAMPLES = 200  # dispersion samples in these tests (the command's default is 1,000)
SEED = 3

# The key figures of `fly --json` that the report must show (JSON paths).
KEY_FIGURES = (
    "apogee_m",
    "max_dynamic_pressure_pa",
    "max_mach",
    "rail_exit_speed_m_s",
    "ledger.ideal_m_s",
    "ledger.gravity_loss_m_s",
    "ledger.drag_loss_m_s",
    "ledger.steering_loss_m_s",
    "ledger.pressure_loss_m_s",
    "ledger.achieved_m_s",
)

# PNG (Portable Network Graphics) Specification, Second Edition, W3C Recommendation
# 10 November 2003 (ISO/IEC 15948:2003): section 5.2 (the signature), 5.3 (chunk layout:
# length, type, data, CRC-32 over type and data), 11.2.2 (IHDR: width, height, bit depth,
# colour type, compression, filter, interlace), 11.2.5 (IEND), table 11.1 (samples per
# pixel of each colour type).
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
PNG_CHANNELS = {0: 1, 2: 3, 3: 1, 4: 2, 6: 4}

VOID_ELEMENTS = {
    "area",
    "base",
    "br",
    "col",
    "embed",
    "hr",
    "img",
    "input",
    "link",
    "meta",
    "source",
    "track",
    "wbr",
}

runner = CliRunner()

# The command on an app of its own, so the tests do not depend on its registration.
report_app = typer.Typer(add_completion=False)
report_app.command("report")(report_command)


@report_app.callback()
def _root() -> None:
    """Keep `report` a subcommand."""


# --- helpers ------------------------------------------------------------------------------


@dataclass
class Keyed:
    """A number in the report that names its JSON document, path and SI value."""

    doc: str
    key: str
    si: str
    text: str = ""


class ReportParser(HTMLParser):
    """Collects what the tests look at, and any badly nested tag."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.problems: list[str] = []
        self.keyed: list[Keyed] = []
        self.images: list[dict[str, str]] = []
        self.urls: list[str] = []
        self.events: list[tuple[str, str]] = []
        self.title = ""
        self.ids: dict[str, str] = {}
        self._open: list[tuple[int, Keyed]] = []
        self._section: list[tuple[int, str]] = []

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        values = {name: value or "" for name, value in attrs}
        self.events.append(("start", tag))
        for name in ("src", "href", "action", "srcset", "poster", "data", "formaction"):
            if name in values:
                self.urls.append(values[name])
        if tag == "img":
            self.images.append(values)
        if "data-key" in values:
            self._open.append(
                (len(self.stack), Keyed(values["data-doc"], values["data-key"], values["data-si"]))
            )
        if "id" in values:
            self._section.append((len(self.stack), values["id"]))
            self.ids.setdefault(values["id"], "")
        if tag not in VOID_ELEMENTS:
            self.stack.append(tag)

    def handle_startendtag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.handle_starttag(tag, attrs)
        if tag not in VOID_ELEMENTS:
            self.handle_endtag(tag)

    def handle_endtag(self, tag: str) -> None:
        self.events.append(("end", tag))
        if tag in VOID_ELEMENTS:
            self.problems.append(f"end tag of void element <{tag}> at {self.getpos()}")
            return
        if not self.stack or self.stack[-1] != tag:
            self.problems.append(f"</{tag}> closes <{self.stack[-1:]}> at {self.getpos()}")
            return
        self.stack.pop()
        depth = len(self.stack)
        while self._open and self._open[-1][0] == depth:
            self.keyed.append(self._open.pop()[1])
        while self._section and self._section[-1][0] == depth:
            self._section.pop()

    def handle_data(self, data: str) -> None:
        self.events.append(("text", data))
        if self.stack and self.stack[-1] == "title":
            self.title += data
        for _, item in self._open:
            item.text += data
        for _, name in self._section:
            self.ids[name] += data


def parse(html: str) -> ReportParser:
    parser = ReportParser()
    parser.feed(html)
    parser.close()
    return parser


def lookup(document: Any, path: str) -> Any:
    """The value at a dot-separated JSON path (list positions as numbers)."""
    value = document
    for part in path.split("."):
        value = value[int(part)] if isinstance(value, list) else value[part]
    return value


def png_size(data: bytes) -> tuple[int, int]:
    """Check a PNG file's structure and decode its pixel data; return (width, height)."""
    assert data[:8] == PNG_SIGNATURE
    position = 8
    chunks: list[tuple[bytes, bytes]] = []
    while position < len(data):
        (length,) = struct.unpack(">I", data[position : position + 4])
        kind = data[position + 4 : position + 8]
        body = data[position + 8 : position + 8 + length]
        (crc,) = struct.unpack(">I", data[position + 8 + length : position + 12 + length])
        assert zlib.crc32(kind + body) == crc, f"bad CRC in chunk {kind!r}"
        chunks.append((kind, body))
        position += 12 + length
    assert position == len(data), "bytes after the last chunk"
    assert chunks[0][0] == b"IHDR" and len(chunks[0][1]) == 13
    assert chunks[-1] == (b"IEND", b"")
    width, height, depth, colour, _, _, interlace = struct.unpack(">IIBBBBB", chunks[0][1])
    assert width > 0 and height > 0
    # the pixel data must inflate to one filter byte plus one row of samples per row
    pixels = zlib.decompress(b"".join(body for kind, body in chunks if kind == b"IDAT"))
    if interlace == 0:
        stride = math.ceil(width * PNG_CHANNELS[colour] * depth / 8)
        assert len(pixels) == height * (1 + stride)
    return width, height


def browser_paths() -> tuple[str, str]:
    """Chromium and chromedriver, or skip (fail under CI) saying what is missing."""
    chromium = shutil.which("chromium") or shutil.which("chromium-browser")
    driver = shutil.which("chromedriver")
    if driver is None and Path("/usr/bin/chromedriver").is_file():
        driver = "/usr/bin/chromedriver"
    missing = []
    if chromium is None:
        missing.append("Chromium (/usr/bin/chromium; Debian package chromium)")
    if driver is None:
        missing.append("chromedriver (Debian package chromium-driver)")
    try:
        import selenium  # noqa: F401
    except ImportError:
        missing.append("the Python package selenium")
    if missing:
        reason = "the browser test needs " + ", ".join(missing)
        if os.environ.get("CI") == "true":
            pytest.fail(reason + "; under CI=true it must run, not skip")
        pytest.skip(reason)
    assert chromium is not None and driver is not None
    return chromium, driver


@dataclass
class Run:
    """A report written by the command, and the JSON documents of the same run."""

    path: Path
    html: str
    parsed: ReportParser
    docs: dict[str, Any]
    output: str


def json_of(*args: str) -> Any:
    result = runner.invoke(app, [*args, "--json"])
    assert result.exit_code in (0, 1), result.output
    return json.loads(result.stdout)


def write_report(path: Path, mission: Path, *extra: str) -> str:
    result = runner.invoke(report_app, ["report", str(mission), "-o", str(path), *extra])
    assert result.exit_code == 0, result.output
    return result.output


@pytest.fixture(scope="module")
def competition(tmp_path_factory: pytest.TempPathFactory) -> Run:
    """The two-stage example (it has [[dispersion]] tables), in SI units."""
    path = tmp_path_factory.mktemp("competition") / "report.html"
    output = write_report(path, COMPETITION, "--samples-count", str(SAMPLES), "--seed", str(SEED))
    html = path.read_text(encoding="utf-8")
    mission = str(COMPETITION)
    docs = {
        "fly": json_of("fly", mission),
        "budget": json_of("budget", mission),
        "scatter": json_of(
            "scatter", mission, "-n", str(SAMPLES), "--seed", str(SEED), "--workers", "1"
        ),
    }
    return Run(path, html, parse(html), docs, output)


@pytest.fixture(scope="module")
def hobby_us(tmp_path_factory: pytest.TempPathFactory) -> Run:
    """The single-stage example (no [[dispersion]] tables), in US customary units."""
    path = tmp_path_factory.mktemp("hobby") / "report.html"
    output = write_report(path, HOBBY, "--units", "us")
    html = path.read_text(encoding="utf-8")
    docs = {"fly": json_of("fly", str(HOBBY)), "budget": json_of("budget", str(HOBBY))}
    return Run(path, html, parse(html), docs, output)


def check_against_json(run: Run) -> set[tuple[str, str]]:
    """Every keyed number equals its JSON value exactly; returns the (doc, key) pairs."""
    assert run.parsed.keyed
    seen = set()
    for item in run.parsed.keyed:
        expected = lookup(run.docs[item.doc], item.key)
        where = f"{item.doc}:{item.key} = {item.si} shown as {item.text!r}"
        if expected is None:  # the JSON writes non-finite values as null
            assert not math.isfinite(float(item.si)), where
        elif isinstance(expected, int):
            assert int(item.si) == expected, where
        else:
            value = float(item.si)
            assert repr(value) == item.si, where  # full precision: repr round trip
            assert value == expected, where
        seen.add((item.doc, item.key))
    return seen


# --- the report's numbers -----------------------------------------------------------------


def test_report_numbers_equal_the_json_output(competition: Run) -> None:
    seen = check_against_json(competition)
    assert {("fly", key) for key in KEY_FIGURES} <= seen
    assert {doc for doc, _ in seen} == {"fly", "budget", "scatter"}
    fly = competition.docs["fly"]
    # every stage segment of the ledger, every event and every percentile is there
    for i, _ in enumerate(fly["ledger"]["segments"]):
        assert ("fly", f"ledger.segments.{i}.drag_loss_m_s") in seen
    for i, _ in enumerate(fly["events"]):
        assert ("fly", f"events.{i}.altitude_m") in seen
    for metric in competition.docs["scatter"]["percentiles"]:
        for p in ("p1", "p5", "p50", "p95", "p99"):
            assert ("scatter", f"percentiles.{metric}.{p}") in seen
    assert ("scatter", "probability_of_meeting_target") in seen
    assert ("budget", "margin_m_s") in seen
    for key in (
        "margins.target.value",
        "margins.propulsion.fraction_of_impulse",
        "margins.propulsion.ideal_delta_v_m_s",
        "margins.payload.mass_kg",
    ):
        assert ("fly", key) in seen
    assert lookup(competition.docs["scatter"], "samples") == SAMPLES


def test_key_figures_are_shown_in_display_units(hobby_us: Run) -> None:
    seen = check_against_json(hobby_us)
    assert {("fly", key) for key in KEY_FIGURES} <= seen
    shown = {(item.doc, item.key): item.text for item in hobby_us.parsed.keyed}
    fly = hobby_us.docs["fly"]
    # 1 ft = 0.3048 m exactly; 1 lbf = 0.45359237 kg × 9.80665 m/s² exactly; 1 in = 0.0254 m
    # (International yard and pound agreement, 1959; NIST Special Publication 811, 2008,
    # Appendix B)
    psi = 0.45359237 * 9.80665 / 0.0254**2
    assert shown["fly", "apogee_m"] == format_number(fly["apogee_m"] / 0.3048, 4)
    assert shown["fly", "rail_exit_speed_m_s"] == format_number(
        fly["rail_exit_speed_m_s"] / 0.3048, 4
    )
    assert shown["fly", "max_dynamic_pressure_pa"] == format_number(
        fly["max_dynamic_pressure_pa"] / psi, 4
    )
    assert shown["fly", "ledger.ideal_m_s"] == format_number(fly["ledger"]["ideal_m_s"] / 0.3048)
    assert shown["fly", "max_mach"] == format_number(fly["max_mach"], 3)


def test_orbital_report_numbers_equal_the_json_output() -> None:
    from propulsion.mission import load_mission
    from propulsion.report.html import build_report
    from propulsion.units import display_units

    orbital = MISSIONS / "orbital_launcher.toml"
    html = build_report(load_mission(orbital), display_units("si"))
    docs = {"fly": json_of("fly", str(orbital)), "budget": json_of("budget", str(orbital))}
    run = Run(orbital, html, parse(html), docs, "")
    assert run.parsed.problems == []
    seen = check_against_json(run)
    assert {("fly", key) for key in KEY_FIGURES} <= seen
    assert ("fly", "orbit.perigee_altitude_m") in seen
    assert ("fly", "margins.propulsion.ideal_delta_v_m_s") in seen
    assert ("fly", "delta_v_left_after_later_legs_m_s") in seen
    # every leg burns just what it needs, so each leg's margin is one number: said once
    legs = docs["budget"]["legs"]
    assert len({round(leg["margin_m_s"], 6) for leg in legs}) == 1
    assert ("budget", "legs.0.margin_m_s") in seen
    for j, _ in enumerate(legs):
        assert ("budget", f"legs.{j}.required_delta_v_m_s") in seen


def test_report_without_dispersion_says_so(hobby_us: Run) -> None:
    assert not any(item.doc == "scatter" for item in hobby_us.parsed.keyed)
    assert "no [[dispersion]] tables" in hobby_us.html
    assert "Probability of meeting" not in hobby_us.html


def test_caution_comes_first_and_the_document_parses(competition: Run) -> None:
    parsed = competition.parsed
    assert parsed.problems == []
    assert parsed.stack == []  # every element closed
    assert competition.html.startswith("<!DOCTYPE html>")
    assert "Bramble" in parsed.title and __version__ in parsed.title
    caution = " ".join(parsed.ids["safety-caution"].split())
    assert SAFETY_TITLE in caution and SAFETY_CAUTION in caution
    events = parsed.events
    first_table = events.index(("start", "table"))
    first_h1 = events.index(("start", "h1"))
    caution_at = next(i for i, (kind, text) in enumerate(events) if SAFETY_CAUTION in text)
    assert first_h1 < caution_at < first_table
    # nothing but the title comes before it: no section, table or figure
    before = [text for kind, text in events[:caution_at] if kind == "start"]
    assert not {"table", "figure", "img", "dl", "ul"} & set(before)


def test_report_has_every_part(competition: Run) -> None:
    ids = competition.parsed.ids
    for anchor in (
        "summary",
        "verdict",
        "vehicle",
        "budget",
        "flight",
        "warnings",
        "dispersion",
        "figures",
        "assumptions",
        "sources",
    ):
        assert anchor in ids, anchor
    text = " ".join(" ".join(ids.values()).split())
    for phrase in (
        "missions/two_stage_competition.toml",
        "Two-stage 54/38 mm student rocket",  # the description
        "point mass",
        "angle of attack",
        "transonic",
        "NOAA-S/T 76-1562",
        "NIMA TR8350.2",
        "Orbital Mechanics for Engineering Students, 3rd ed.",
        "Dormand and P. J. Prince",
        "Hairer",
        "Wilson",
        "Spearman",
        "open loop",
    ):
        assert phrase in text, phrase
    fly = competition.docs["fly"]
    budget = competition.docs["budget"]
    for finding in fly["warnings"] + budget["warnings"]:
        for part in ("subject", "message", "rule", "source"):
            assert " ".join(finding[part].split()) in ids["warnings"], finding[part]
    # the drag curve and a thrust curve per motor stage (two), the flight, two ledgers and
    # the dispersion
    assert len(competition.parsed.images) == 7


def test_report_is_self_contained(competition: Run) -> None:
    parsed = competition.parsed
    for url in parsed.urls:
        assert not url.lower().startswith(("http:", "https:", "//", "ftp:")), url
        assert url.startswith(("#", "data:")), url
    starts = {text for kind, text in parsed.events if kind == "start"}
    assert "script" not in starts and "iframe" not in starts and "object" not in starts
    lowered = competition.html.lower()
    assert "@import" not in lowered and "url(" not in lowered and "@font-face" not in lowered
    assert "http://" not in lowered and "https://" not in lowered
    assert parsed.images
    for image in parsed.images:
        prefix = "data:image/png;base64,"
        assert image["src"].startswith(prefix)
        data = base64.b64decode(image["src"][len(prefix) :], validate=True)
        width, height = png_size(data)
        assert (int(image["width"]), int(image["height"])) == (width, height)
        assert width >= 200 and height >= 100
        assert image.get("alt")


def test_mission_text_is_escaped(tmp_path: Path) -> None:
    text = HOBBY.read_text(encoding="utf-8")
    text = text.replace('name = "Thistle"', "name = \"<script>alert('x')</script> & Co\"")
    text = text.replace(
        'description = "Single-stage',
        'description = "<img src=http://example.invalid/x.png> \\"quoted\\" Single-stage',
    )
    mission = tmp_path / "odd.toml"
    mission.write_text(text, encoding="utf-8")
    path = tmp_path / "odd.html"
    write_report(path, mission)
    html = path.read_text(encoding="utf-8")
    assert "<script>" not in html and "<img src=http" not in html
    assert "&lt;script&gt;alert(&#x27;x&#x27;)&lt;/script&gt; &amp; Co" in html
    parsed = parse(html)
    assert parsed.problems == []
    assert "<script>alert('x')</script> & Co" in parsed.title
    assert all(url.startswith(("#", "data:")) for url in parsed.urls)


# --- the command --------------------------------------------------------------------------


def test_command_reports_where_it_wrote(competition: Run) -> None:
    assert "Wrote the report" in competition.output
    assert competition.path.name in competition.output.replace("\n", "")


def test_refuses_to_overwrite_without_force(tmp_path: Path) -> None:
    path = tmp_path / "report.html"
    path.write_text("keep me", encoding="utf-8")
    result = runner.invoke(report_app, ["report", str(HOBBY), "-o", str(path)])
    assert result.exit_code == 2
    assert "--force" in result.stderr
    assert path.read_text(encoding="utf-8") == "keep me"
    result = runner.invoke(report_app, ["report", str(HOBBY), "-o", str(path), "--force"])
    assert result.exit_code == 0, result.output
    assert path.read_text(encoding="utf-8").startswith("<!DOCTYPE html>")


def test_bad_input_exit_code_2(tmp_path: Path) -> None:
    out = tmp_path / "report.html"
    missing = runner.invoke(report_app, ["report", str(tmp_path / "nope.toml"), "-o", str(out)])
    assert missing.exit_code == 2 and "nope.toml" in missing.stderr
    bad = tmp_path / "bad.toml"
    bad.write_text('[vehicle]\npayload = 2.4\n[[stage]]\nname = "a"\n', encoding="utf-8")
    result = runner.invoke(report_app, ["report", str(bad), "-o", str(out)])
    assert result.exit_code == 2 and "vehicle.payload" in result.stderr
    no_folder = tmp_path / "absent" / "report.html"
    result = runner.invoke(report_app, ["report", str(HOBBY), "-o", str(no_folder)])
    assert result.exit_code == 2 and "does not exist" in result.stderr
    count = runner.invoke(
        report_app, ["report", str(COMPETITION), "-o", str(out), "--samples-count", "0"]
    )
    assert count.exit_code == 2
    no_output = runner.invoke(report_app, ["report", str(HOBBY)])
    assert no_output.exit_code == 2
    assert not out.exists() and not no_folder.parent.exists()


def test_written_whole_or_not_at_all(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from propulsion.report import plots

    def broken(*args: Any, **kwargs: Any) -> bytes:
        raise RuntimeError("the figure could not be drawn")

    monkeypatch.setattr(plots, "figure_bytes", broken)
    path = tmp_path / "report.html"
    result = runner.invoke(report_app, ["report", str(HOBBY), "-o", str(path)])
    assert result.exit_code != 0
    assert isinstance(result.exception, RuntimeError)
    assert list(tmp_path.iterdir()) == []  # neither the report nor a partial file


# --- a real browser -----------------------------------------------------------------------


def test_report_in_headless_chromium(
    competition: Run, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    chromium, driver_path = browser_paths()
    from PIL import Image  # Pillow, which matplotlib (the figures) requires
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service
    from selenium.webdriver.common.by import By

    monkeypatch.setenv("SE_OFFLINE", "true")  # Selenium Manager must not download anything
    options = webdriver.ChromeOptions()
    options.binary_location = chromium
    for flag in (
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-dev-shm-usage",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--no-first-run",
        "--window-size=1280,1600",
        f"--user-data-dir={tmp_path / 'profile'}",
    ):
        options.add_argument(flag)
    options.set_capability("goog:loggingPrefs", {"browser": "ALL"})
    service = Service(executable_path=driver_path, log_output=str(tmp_path / "chromedriver.log"))
    driver = webdriver.Chrome(service=service, options=options)
    try:
        driver.set_page_load_timeout(60)
        driver.get(competition.path.as_uri())
        assert driver.execute_script("return document.readyState") == "complete"
        assert "Bramble" in driver.title
        body = driver.find_element(By.TAG_NAME, "body").text
        shown = {(item.doc, item.key): item.text for item in competition.parsed.keyed}
        for key in KEY_FIGURES:
            rendered = driver.execute_script(
                "return document.querySelector(`[data-doc='fly'][data-key='${arguments[0]}']`)"
                ".innerText",
                key,
            )
            assert rendered == shown["fly", key], key
            assert rendered in body
        assert " ".join(SAFETY_CAUTION.split()) in " ".join(body.split())
        images = driver.execute_script(
            "return Array.from(document.images).map("
            "i => [i.complete, i.naturalWidth, i.naturalHeight])"
        )
        assert len(images) == len(competition.parsed.images) > 0
        assert all(done and width > 0 and height > 0 for done, width, height in images), images
        caution = driver.execute_script(
            "const c = document.getElementById('safety-caution').getBoundingClientRect();"
            "const t = document.querySelector('table').getBoundingClientRect();"
            "const s = getComputedStyle(document.getElementById('safety-caution'));"
            "return [c.top, c.height, t.top, window.innerHeight,"
            " parseFloat(s.borderTopWidth), s.borderTopStyle];"
        )
        top, height, table_top, window_height, border, style = caution
        assert 0 <= top < top + height <= window_height  # on the first screen, whole
        assert top < table_top
        assert border >= 2 and style == "solid"
        screenshot = tmp_path / "report.png"
        assert driver.save_screenshot(str(screenshot))
        severe = [entry for entry in driver.get_log("browser") if entry["level"] == "SEVERE"]
        assert severe == []
    finally:
        driver.quit()
    data = screenshot.read_bytes()
    png_size(data)
    with Image.open(screenshot) as image:
        pixels = image.convert("RGB")
        colours = pixels.getcolors(maxcolors=1 << 24)
        assert colours is not None
        white = dark = 0
        for count, rgb in colours:
            assert isinstance(rgb, tuple)
            white += count if min(rgb) >= 250 else 0
            dark += count if max(rgb) <= 80 else 0
        total = pixels.width * pixels.height
    assert len(colours) > 50  # text, the caution box, rules: not a blank page
    assert dark > 0.005 * total  # text was drawn
    assert white < 0.99 * total
