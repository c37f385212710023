"""`propulsion report`: the reviewer's report, one self-contained HTML file."""

from __future__ import annotations

from pathlib import Path

import typer
from rich.text import Text

from propulsion.cli.common import UNITS_OPTION, UnitSystem, guard, stdout


def report_command(
    mission_file: Path = typer.Argument(
        ..., help="Mission file (TOML).", show_default=False, metavar="MISSION.toml"
    ),
    output: Path = typer.Option(
        ...,
        "-o",
        "--output",
        help="The HTML file to write (self-contained: styles and figures inside).",
        show_default=False,
    ),
    units: UnitSystem = UNITS_OPTION,
    force: bool = typer.Option(False, "--force", help="Overwrite the output file if it exists."),
    dispersion_samples: int = typer.Option(
        1000,
        "--samples-count",
        min=1,
        help="Samples of the dispersion study (when the mission has [[dispersion]] tables).",
    ),
    seed: int = typer.Option(1, "--seed", help="Seed: the same seed gives the same numbers."),
) -> None:
    """Write the reviewer's report: budget, flight, verdicts, warnings, dispersion, figures.

    Example: propulsion report missions/two_stage_competition.toml -o report.html

    The report is one HTML file that opens offline in any browser and prints cleanly. It
    is written whole or not at all. Exit code 0 when it was written (whatever the
    verdict), 2 on bad input or when the output file exists without --force.
    """
    from propulsion.mission import load_mission
    from propulsion.report.files import all_or_nothing, check_output, write_atomic
    from propulsion.report.html import build_report

    console = stdout()
    # the report is moved into place when the block ends without an error
    with guard(), all_or_nothing(mission_file) as outputs:
        from propulsion.studies.scatter import check_study

        check_study(dispersion_samples, seed)
        mission = load_mission(mission_file)
        outputs.protect(mission)
        # refuse before the work, not after it (write_atomic checks again when writing)
        check_output(output, force, suffixes=(".html", ".htm"))
        with console.status("Preparing the report…") as status:
            html = build_report(
                mission,
                units.display(),
                dispersion_samples=dispersion_samples,
                seed=seed,
                progress=lambda text: status.update(Text(text)),
            )
            written = write_atomic(output, html, force)
    size = len(html.encode("utf-8"))
    console.print(
        Text.assemble(
            ("Wrote the report: ", "bold green"), str(written), f" ({size / 1024:,.0f} kB)"
        ),
        highlight=False,
        soft_wrap=True,
    )
