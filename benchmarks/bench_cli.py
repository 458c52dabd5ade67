"""Command-line costs a user feels: ``phasewise --help``, and ``phasewise ephem`` writing a long CSV.

- ``--help``: wall time of ``python -m planner --help`` in fresh processes (medians of interleaved
  runs), beside ``python -c pass`` (the interpreter alone) and ``python -c "import numpy"``; with the
  heavy libraries the help path imports. Measured only: the command modules' imports belong to the
  CLI's own work.
- ``ephem``: a year at 5-minute steps for one site (about 10⁵ epochs, 38 columns) as CSV: the whole
  command, and its CSV writing (``planner.outputs.tablefiles.csv_text``) beside pandas'
  ``DataFrame.to_csv`` with the same number format (the route it replaced), same text checked.
- ECSV twin of a plan folder's geometry table (the same ephemeris cut to 73 700 rows x the 30 geometry
  columns, 6 significant digits, as at 16 sites x 30 nights): ``ecsv_table_text`` beside astropy's own
  ECSV writer (``QTable.write``, the slow twin), same text checked; and the UTC column built through
  ERFA's ``dtf2d`` beside astropy's ``datetime64`` format.

Run: python benchmarks/bench_cli.py [--quick | --full]
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS", "VECLIB_MAXIMUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
#: The bundled demo inputs (package data).
DEMO = ROOT / "planner" / "data" / "demo"
sys.path.insert(0, str(ROOT))

from benchutil import spread  # noqa: E402

ENV = {**os.environ, "PYTHONPATH": str(ROOT)}
HEAVY = ("matplotlib", "pandas", "scipy", "astropy", "skyfield", "numpy")


def wall(args: list[str]) -> float:
    t0 = time.perf_counter()
    subprocess.run([sys.executable, *args], env=ENV, capture_output=True, check=True)
    return time.perf_counter() - t0


def heavy_imports() -> list[str]:
    code = (
        "import sys; from planner.cli import main\n"
        "try:\n    main(['--help'])\nexcept SystemExit:\n    pass\n"
        f"print('loaded:', *(m for m in {HEAVY!r} if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], env=ENV, capture_output=True, text=True, check=True)
    # The help text comes first; the list is the last line that starts with the marker (maybe empty).
    last = [line for line in out.stdout.splitlines() if line.startswith("loaded:")][-1]
    return last.split()[1:]


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    size = ap.add_mutually_exclusive_group()
    size.add_argument("--quick", action="store_true", help="3 repetitions")
    size.add_argument("--full", action="store_true", help="9 repetitions")
    args = ap.parse_args()
    reps = 3 if args.quick else 9 if args.full else 5
    routes = {
        "python -m planner --help": ["-m", "planner", "--help"],
        'python -c "import numpy"': ["-c", "import numpy"],
        "python -c pass": ["-c", "pass"],
    }
    times: dict[str, list[float]] = {k: [] for k in routes}
    for _ in range(reps):
        for k, a in routes.items():
            times[k].append(wall(a))
    print(f"start-up, {reps} interleaved runs each, fresh processes")
    for k, v in times.items():
        print(f"  {k:28s} {spread(v)}")
    print(f"  heavy libraries loaded by --help: {', '.join(heavy_imports()) or 'none'}")

    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "e.csv"
        cmd = [
            "-m",
            "planner",
            "ephem",
            "--target",
            str(DEMO / "c2034-b3-quillfeather.toml"),
            "--start",
            "2034-01-01",
            "--stop",
            "2034-12-31",
            "--step",
            "5m",
            "--site",
            str(DEMO / "sites" / "karoo-ridge.toml"),
            "--format",
            "csv",
            "--out",
            str(out),
        ]
        t_cmd = [wall(cmd) for _ in range(max(1, reps // 2))]
        import pandas as pd

        from planner.outputs.tablefiles import csv_text

        df = pd.read_csv(out, dtype={"n_stack_for_snr": "Int64", "n_exposures_per_hour": "Int64"})
        ours, peer = [], []
        for _ in range(reps):
            t0 = time.perf_counter()
            text = csv_text(df, "%.10g")
            ours.append(time.perf_counter() - t0)
            t0 = time.perf_counter()
            ref = df.to_csv(index=False, float_format="%.10g", lineterminator="\n")
            peer.append(time.perf_counter() - t0)
    print(f"\nphasewise ephem, a year at 5 min, one site ({len(df)} rows x {df.shape[1]} columns, CSV)")
    print(f"  whole command                {spread(t_cmd)}")
    print(f"  CSV text: csv_text           {spread(ours)}")
    print(f"  CSV text: pandas to_csv      {spread(peer)}")
    print(f"  ratio of medians             {np.median(peer) / np.median(ours):8.1f}x   same text: {text == ref}")
    ecsv_twin(df, reps)


def ecsv_twin(ephem, reps: int) -> None:
    """The plan folder's geometry ECSV twin from the ephem DataFrame, by ``ecsv_table_text`` and by astropy."""
    import pandas as pd

    from planner.outputs.tablefiles import _time_column, _time_column_slow, as_qtable, ecsv_table_text
    from planner.outputs.tablefiles import ecsv_table_text_slow as astropy_writer

    geo = ephem.iloc[:73_700, :30].copy()
    geo["time_utc"] = pd.to_datetime(geo["time_utc"]).dt.tz_localize(None)
    qt = as_qtable(geo, {"table": "geometry"})
    times = {"ecsv_table_text": [], "astropy QTable.write": [], "UTC column, ERFA dtf2d": [], "UTC column, astropy": []}
    for _ in range(reps):
        for label, run in (
            ("ecsv_table_text", lambda: ecsv_table_text(qt, "%.6g")),
            ("astropy QTable.write", lambda: astropy_writer(qt, "%.6g")),
            ("UTC column, ERFA dtf2d", lambda: _time_column(geo["time_utc"])),
            ("UTC column, astropy", lambda: _time_column_slow(geo["time_utc"])),
        ):
            t0 = time.perf_counter()
            run()
            times[label].append(time.perf_counter() - t0)
    same = ecsv_table_text(qt, "%.6g") == astropy_writer(qt, "%.6g")
    med = {k: np.median(v) for k, v in times.items()}
    print(f"\ngeometry ECSV twin ({len(geo)} rows x {geo.shape[1]} columns, %.6g), {reps} interleaved runs")
    for k, v in times.items():
        print(f"  {k:28s} {spread(v)}")
    ratio = med["astropy QTable.write"] / med["ecsv_table_text"]
    print(f"  writer: ratio of medians     {ratio:8.1f}x   same text: {same}")
    print(f"  UTC column: ratio of medians {med['UTC column, astropy'] / med['UTC column, ERFA dtf2d']:8.1f}x")


if __name__ == "__main__":
    main()
