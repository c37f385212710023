"""The documentation: README.md, DEVELOPERS.md and the pages in docs/.

What is checked, and against what:

* every relative link and image of the README, DEVELOPERS.md and the pages points at a file
  that exists, and every ``#anchor`` names a heading of its target. The anchors are resolved
  the way the reader's renderer makes them: GitHub's slugs for the two files at the top (read
  on the repository's site), Python-Markdown's ``toc`` slugs for docs/ (what mkdocs builds,
  with the extensions mkdocs.yml names), duplicates numbered as each renderer numbers them;
* a page of docs/ links only inside docs/ (mkdocs cannot resolve anything else), and every
  page is in the site's navigation, which builds in strict mode;
* the README stays a short front page (at most 320 lines; the manual is in docs/), its quick
  start is exactly ``make demo`` and ``make test`` in one code block, and its output excerpts
  fit an 80-column terminal; DEVELOPERS.md stays at most 26,000 bytes;
* no "(s)" plural: the project writes counts in words that agree with them.

``make docs`` builds the site with ``mkdocs build --strict``, which checks links, anchors and
the navigation too; these tests catch the same faults without building, and cover the two
files outside docs/.
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from functools import cache
from pathlib import Path

import markdown
import pytest
import yaml

ROOT = Path(__file__).resolve().parent.parent
DOCS = ROOT / "docs"
README = ROOT / "README.md"
DEVELOPERS = ROOT / "DEVELOPERS.md"
TOP_LEVEL = (README, DEVELOPERS)
PAGES = tuple(sorted(DOCS.rglob("*.md")))
ALL = (*TOP_LEVEL, *PAGES)

README_MAX_LINES = 320
DEVELOPERS_MAX_BYTES = 26_000
EXCERPT_COLUMNS = 80

FENCE = re.compile(r"^(```|~~~)")
CODE_SPAN = re.compile(r"(`+)((?:[^\n]|\n(?!\n))+?)\1")
# [text](target) and ![alt](target), with an optional "title"; the text may hold one level of
# brackets once code spans are blanked (`[[dispersion]]` inside backticks is blanked first).
LINK = re.compile(r"(!?)\[(?:[^\[\]]|\[[^\[\]]*\])*\]\(\s*<?([^)\s>]+)>?(?:\s+\"[^\"]*\")?\s*\)")
HEADING = re.compile(r"^(#{1,6})\s+(.*?)\s*#*\s*$")
EXTERNAL = re.compile(r"^[a-z][a-z0-9+.-]*:", re.IGNORECASE)  # http:, https:, mailto:, ...


def _name(path: Path) -> str:
    return path.relative_to(ROOT).as_posix()


def _prose(text: str) -> str:
    """The text with fenced code blocks and code spans blanked out (line breaks kept, so
    offsets still give line numbers). A code span may wrap onto the next line, not across a
    blank one."""
    kept = []
    fenced = False
    for line in text.split("\n"):
        if FENCE.match(line.lstrip()):
            fenced = not fenced
            kept.append("")
        else:
            kept.append("" if fenced else line)
    return CODE_SPAN.sub(lambda m: re.sub(r"[^\n]", " ", m.group(0)), "\n".join(kept))


def _code_lines(text: str) -> Iterator[tuple[int, str]]:
    """(line number, line) inside fenced code blocks."""
    fenced = False
    for number, line in enumerate(text.splitlines(), start=1):
        if FENCE.match(line.lstrip()):
            fenced = not fenced
            continue
        if fenced:
            yield number, line


def links(path: Path) -> list[tuple[int, bool, str]]:
    """Every Markdown link and image of a file: (line, is an image, target). Link text may
    wrap over lines."""
    prose = _prose(path.read_text(encoding="utf-8"))
    return [
        (prose.count("\n", 0, match.start()) + 1, match.group(1) == "!", match.group(2))
        for match in LINK.finditer(prose)
    ]


def github_slug(heading: str) -> str:
    """The anchor GitHub gives a heading: the rendered text in lower case, punctuation
    removed (letters, digits, ``_``, ``-`` and spaces kept), each space made a ``-``
    (GitHub's rendering of Markdown headings, as its anchor links show; no published spec)."""
    text = re.sub(r"!?\[([^\]]*)\]\([^)]*\)", r"\1", heading)  # a link shows its text
    text = re.sub(r"<[^>]+>", "", text).strip().lower()
    return re.sub(r"[^\w\- ]", "", text).replace(" ", "-")


@cache
def github_anchors(path: Path) -> frozenset[str]:
    """Anchors of a Markdown file as GitHub renders it: a repeated slug gets ``-1``, ``-2``."""
    seen: dict[str, int] = {}
    anchors = set()
    for _, line in _headings(path):
        slug = github_slug(line)
        count = seen.get(slug, 0)
        seen[slug] = count + 1
        anchors.add(slug if count == 0 else f"{slug}-{count}")
    return frozenset(anchors)


def _headings(path: Path) -> Iterator[tuple[int, str]]:
    """ATX headings outside fenced code: (level, text as written, code spans kept)."""
    fenced = False
    for line in path.read_text(encoding="utf-8").splitlines():
        if FENCE.match(line.lstrip()):
            fenced = not fenced
            continue
        match = HEADING.match(line)
        if match and not fenced:
            yield len(match.group(1)), match.group(2)


@cache
def mkdocs_anchors(path: Path) -> frozenset[str]:
    """Anchors of a page as mkdocs builds it: Python-Markdown's ``toc`` ids, with the
    extensions mkdocs.yml names (a repeated id gets ``_1``, ``_2``)."""
    renderer = markdown.Markdown(extensions=["toc", "tables", "fenced_code"])
    renderer.convert(path.read_text(encoding="utf-8"))

    def walk(tokens: list[dict[str, object]]) -> Iterator[str]:
        for token in tokens:
            yield str(token["id"])
            children = token.get("children")
            if isinstance(children, list):
                yield from walk(children)

    return frozenset(walk(renderer.toc_tokens))  # type: ignore[attr-defined]


def broken_links(path: Path, images: bool) -> list[str]:
    """What is wrong with the relative links (or images) of a file, one line each."""
    problems = []
    for number, is_image, target in links(path):
        if is_image != images or EXTERNAL.match(target):
            continue
        where = f"{_name(path)}, line {number}: {target}"
        file_part, _, anchor = target.partition("#")
        destination = (path.parent / file_part).resolve() if file_part else path
        if not destination.is_file():
            problems.append(f"{where}: no such file")
            continue
        if path.is_relative_to(DOCS) and not destination.is_relative_to(DOCS):
            problems.append(f"{where}: leads out of docs/, where mkdocs cannot follow it")
            continue
        if anchor:
            if destination.suffix != ".md":
                problems.append(f"{where}: an anchor into a file that is not Markdown")
                continue
            known = mkdocs_anchors(destination) if path in PAGES else github_anchors(destination)
            if anchor not in known:
                problems.append(f"{where}: {_name(destination)} has no heading '#{anchor}'")
    return problems


def _section(text: str, title: str) -> str:
    """The text of a level-2 section, up to the next level-2 heading."""
    start = text.index(f"\n## {title}\n")
    end = text.find("\n## ", start + 1)
    return text[start : end if end != -1 else len(text)]


# --- links and images --------------------------------------------------------------------------


def test_the_documentation_exists() -> None:
    # a guard for the tests below: an empty docs/ would pass every link check
    assert README.is_file() and DEVELOPERS.is_file()
    assert (DOCS / "index.md").is_file()
    assert len(PAGES) >= 20
    assert sum(len(links(path)) for path in ALL) > 200


@pytest.mark.parametrize("path", ALL, ids=_name)
def test_relative_links_resolve(path: Path) -> None:
    problems = broken_links(path, images=False)
    assert not problems, "\n".join(problems)


@pytest.mark.parametrize("path", ALL, ids=_name)
def test_images_exist(path: Path) -> None:
    problems = broken_links(path, images=True)
    assert not problems, "\n".join(problems)


def test_the_readme_shows_the_worksheet_screenshot() -> None:
    assert any(image and target == "docs/worksheet.svg" for _, image, target in links(README))


def test_the_slugs_follow_their_renderers() -> None:
    # Known renderings: GitHub keeps underscores and drops punctuation and code marks, each
    # space a hyphen ("--json" keeps its hyphens); Python-Markdown's toc (mkdocs) drops
    # non-ASCII letters and folds runs of spaces and hyphens into one.
    assert github_slug("`propulsion budget MISSION_FILE`") == "propulsion-budget-mission_file"
    assert github_slug("`budget --json`") == "budget---json"
    assert github_slug("Is my margin enough?") == "is-my-margin-enough"
    page = DOCS / "reference" / "json.md"
    assert "budget-json" in mkdocs_anchors(page)
    assert "budget---json" in github_anchors(page)


def test_every_page_is_in_the_navigation_and_the_build_is_strict() -> None:
    config = yaml.safe_load((ROOT / "mkdocs.yml").read_text(encoding="utf-8"))
    assert config["strict"] is True

    def pages(entry: object) -> Iterator[str]:
        if isinstance(entry, str):
            yield entry
        elif isinstance(entry, dict):
            for value in entry.values():
                yield from pages(value)
        elif isinstance(entry, list):
            for item in entry:
                yield from pages(item)

    in_nav = set(pages(config["nav"]))
    on_disk = {path.relative_to(DOCS).as_posix() for path in PAGES}
    assert in_nav == on_disk


# --- the README and DEVELOPERS.md -------------------------------------------------------------


def test_the_readme_is_a_short_front_page() -> None:
    lines = README.read_text(encoding="utf-8").splitlines()
    assert len(lines) <= README_MAX_LINES, f"README.md has {len(lines)} lines"


def test_developers_md_stays_small() -> None:
    size = DEVELOPERS.stat().st_size
    assert size <= DEVELOPERS_MAX_BYTES, f"DEVELOPERS.md has {size} bytes"


def test_the_quick_start_is_exactly_two_commands() -> None:
    section = _section(README.read_text(encoding="utf-8"), "Quick start")
    blocks = re.findall(r"^```[^\n]*\n(.*?)^```", section, flags=re.MULTILINE | re.DOTALL)
    assert len(blocks) == 1, f"{len(blocks)} code blocks in the quick start"
    commands = [line.strip() for line in blocks[0].splitlines() if line.strip()]
    assert commands == ["make demo", "make test"]


def test_readme_excerpts_fit_80_columns() -> None:
    text = README.read_text(encoding="utf-8")
    wide = [
        f"line {number}: {len(line)} columns"
        for number, line in _code_lines(text)
        if len(line) > EXCERPT_COLUMNS
    ]
    assert not wide, "\n".join(wide)


# --- wording -----------------------------------------------------------------------------------


@pytest.mark.parametrize("path", ALL, ids=_name)
def test_no_s_plurals(path: Path) -> None:
    # "1 stage(s)" reads as a form to fill in; counts are written in words that agree with
    # them ("3 firings"), in quoted output too.
    found = [
        f"{_name(path)}, line {number}: {line.strip()}"
        for number, line in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1)
        if re.search(r"\w\(s\)", line)
    ]
    assert not found, "\n".join(found)
