"""Write the invented static-fire logs of the demonstration motor "team-54J".

Three firings of one student-built 54 mm ammonium-perchlorate motor, as a load cell
would log them: 2 s of padding before and after the burn, a zero offset (tare), noise
around zero, and a different file layout and unit in each log. The "truth" of each
firing (the noise-free curve's total impulse and burn time) is printed, so the import
can be checked against it. Invented data for the examples; not a real motor.

Run from the repository's root: ``python data/firings/make_demo_logs.py``.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

KGF = 9.80665  # N per kilogram-force (exact, by definition)
LBF = 4.4482216152605  # N per pound-force (exact, by definition)
HERE = Path(__file__).parent


def true_curve(t: np.ndarray, scale: float, burn: float) -> np.ndarray:
    """Noise-free thrust [N]: a 60 ms rise, a progressive plateau and a 0.25 s tail-off."""
    rise = np.clip(t / 0.06, 0.0, 1.0)
    plateau = 560.0 + 90.0 * np.clip(t / (burn - 0.25), 0.0, 1.0)
    tail = np.clip((burn - t) / 0.25, 0.0, 1.0)
    return scale * np.where((t >= 0) & (t <= burn), rise * plateau * tail, 0.0)


def main() -> None:
    rng = np.random.default_rng(20261203)
    rate = 1000.0  # samples per second
    firings = [
        ("demo_fire_1.csv", 1.00, 1.62, "ms", "kgf", ","),
        ("demo_fire_2.tsv", 0.98, 1.66, "s", "N", "\t"),
        ("demo_fire_3.txt", 1.02, 1.58, "s", "lbf", " "),
    ]
    for name, scale, burn, time_unit, force_unit, sep in firings:
        t = np.arange(-2.0, burn + 2.0, 1.0 / rate)
        truth = true_curve(t, scale, burn)
        fine = np.linspace(0.0, burn, 200_001)
        impulse = float(np.trapezoid(true_curve(fine, scale, burn), fine))
        tare = rng.uniform(-15.0, 15.0)
        reading = truth + tare + rng.normal(0.0, 3.0, t.size)
        time_out = (t + 2.0) * (1000.0 if time_unit == "ms" else 1.0)
        force_out = reading / {"N": 1.0, "kgf": KGF, "lbf": LBF}[force_unit]
        head = f"time ({time_unit}){sep}load ({force_unit})"
        if sep == " ":
            head = f"t[{time_unit}]  load[{force_unit}]"
        lines = [
            "# invented static-fire log, team-54J, for the propulsion examples",
            head,
        ]
        lines += [f"{a:.4f}{sep}{b:.3f}" for a, b in zip(time_out, force_out, strict=True)]
        (HERE / name).write_text("\n".join(lines) + "\n", encoding="utf-8")
        print(f"{name}: total impulse {impulse:.2f} N*s, burn time {burn:.3f} s")


if __name__ == "__main__":
    main()
