"""The wheel carries the data tables, so an installed copy (not only a checkout) finds them."""

from __future__ import annotations

import subprocess
import sys
import zipfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def test_wheel_contains_the_data_tables(tmp_path: Path) -> None:
    subprocess.run(
        [sys.executable, "-m", "hatchling", "build", "-t", "wheel", "-d", str(tmp_path)],
        cwd=ROOT,
        check=True,
        capture_output=True,
        timeout=120,
    )
    (wheel,) = tmp_path.glob("propulsion-*.whl")
    names = set(zipfile.ZipFile(wheel).namelist())
    shipped = {
        "propulsion/_data/" + path.relative_to(ROOT / "data").as_posix()
        for path in (ROOT / "data").rglob("*.csv")
    }
    assert "propulsion/_data/propellants.csv" in shipped
    assert shipped <= names
    assert "propulsion/cli/__init__.py" in names
