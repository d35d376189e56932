"""Render the app's snapshot SVGs as PNGs to look at (not a test; needs cairosvg, which the suite does not).

    python tests/app/snapshot_pngs.py

Writes tests/app/snapshot_png/<test>/<name>.png (outside __snapshots__, which the snapshot plugin prunes), with the
SVG's font swapped for DejaVu Sans Mono (the SVG asks for Fira Code, which a
machine may not have: a proportional stand-in would misplace every column).
"""

from __future__ import annotations

import re
from pathlib import Path

import cairosvg  # type: ignore[import-not-found]

SNAPSHOTS = Path(__file__).resolve().parent / "__snapshots__"
#: Outside `__snapshots__`: the snapshot plugin deletes any file there it did not write.
PNGS = Path(__file__).resolve().parent / "snapshot_png"


def main() -> None:
    for svg in sorted(SNAPSHOTS.glob("test_*/*.svg")):
        text = re.sub(r"font-family:[^;]*;", "font-family: 'DejaVu Sans Mono';", svg.read_text(encoding="utf-8"))
        out = PNGS / svg.parent.name / (svg.stem + ".png")
        out.parent.mkdir(parents=True, exist_ok=True)
        cairosvg.svg2png(bytestring=text.encode(), write_to=str(out), output_width=1200)
        print(out.relative_to(SNAPSHOTS.parent.parent.parent))


if __name__ == "__main__":
    main()
