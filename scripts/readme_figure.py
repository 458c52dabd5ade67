"""Regenerate the README's figure from the demo campaign's report.

    python scripts/readme_figure.py [PLAN_DIR] [--figure fig-window] [--out docs/demo-spectral-window.png]

Without PLAN_DIR it runs `phasewise demo` into a temporary folder first. The PNG is cut out of the
rendered report.html itself, so the README shows exactly what the report shows.
"""

from __future__ import annotations

import argparse
import base64
import re
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def figure_png(report_html: str, figure_id: str) -> bytes:
    m = re.search(rf'<figure id="{re.escape(figure_id)}"><img src="data:image/png;base64,([^"]+)"', report_html)
    if not m:
        raise SystemExit(f"error: report.html: {figure_id}: no such figure")
    return base64.b64decode(m.group(1))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("plan_dir", nargs="?", type=Path)
    ap.add_argument("--figure", default="fig-window")
    ap.add_argument("--out", type=Path, default=ROOT / "docs" / "demo-spectral-window.png")
    args = ap.parse_args()
    sys.path.insert(0, str(ROOT))
    from planner.core.fileio import write_bytes_atomic
    from planner.outputs.report import render_report

    with tempfile.TemporaryDirectory() as tmp:
        plan_dir = args.plan_dir
        if plan_dir is None:
            plan_dir = Path(tmp) / "demo"
            subprocess.run(
                [sys.executable, "-m", "planner", "demo", "--out", str(plan_dir)],
                cwd=ROOT,
                check=True,
                stdout=subprocess.DEVNULL,
            )
        png = figure_png(render_report(plan_dir), args.figure)
    write_bytes_atomic(args.out, png)
    print(f"{args.out} ({len(png)} bytes)")


if __name__ == "__main__":
    main()
