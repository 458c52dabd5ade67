"""Network scale: `phasewise plan --out` on N invented sites × M nights, time and peak memory per run.

Sites are invented, spread evenly in longitude (every 360/N degrees) at southern and tropical
latitudes, each with a small telescope and 4 h a night; the target is the demo comet
(planner/data/demo/c2034-b3-quillfeather.toml), observable from mid-March to June 2034. The campaign uses
the demo's settings (5-minute slots, periods 2–30 h, 400 weather trials, 100 injection trials).
Every run is a fresh subprocess (BLAS threads pinned) that loads the campaign, plans it, writes
the plan folder with its report (the first render, every figure drawn: the "1st report" column,
against the goal of 10 % of the plan), then re-renders the report alone (what `phasewise report`
does, its figures from the folder's cache); it prints wall times per stage and its peak resident
memory (VmHWM from /proc/self/status).

Default: 16 sites × 30 nights (goal ≤ 60 s and ≤ 600 MB), then a nights sweep at 4 sites
(7, 15, 30, 60, 90 nights), with the exponents of time and memory against nights fitted by least
squares in log–log (goal ≤ 1.05), also per stage. ``--quick`` runs 16 × 30 once and the sweep 7…30;
``--full`` runs three repetitions and sweeps 16 sites (about half an hour).
Repetitions are interleaved across sizes (one pass over every size, then the next pass) and
medians are printed with the spread. Run: python benchmarks/bench_scale.py [--quick|--full]
"""

from __future__ import annotations

import os

for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS", "VECLIB_MAXIMUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import json  # noqa: E402
import subprocess  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
TARGET = ROOT / "planner" / "data" / "demo" / "c2034-b3-quillfeather.toml"
FIRST_NIGHT = "2034-03-16"

#: (latitude, aperture m) cycled over the invented sites: southern sites see the comet (Dec −26° → −10°) high.
_SITE_KINDS = ((-30.5, 1.0), (-24.6, 0.6), (-33.9, 0.8), (-18.2, 0.5), (-28.0, 1.2), (-21.4, 0.7), (12.0, 0.9))


def site_toml(k: int, n_sites: int) -> str:
    """An invented site file: longitude k·360/N − 180 (+ a small offset), a fixed-offset time zone."""
    lon = -180.0 + 360.0 * k / n_sites + 7.3
    lat, aperture = _SITE_KINDS[k % len(_SITE_KINDS)]
    offset_h = round(lon / 15.0)
    tz = "UTC" if offset_h == 0 else f"Etc/GMT{'-' if offset_h > 0 else '+'}{abs(offset_h)}"
    return f"""# Invented site {k + 1} of {n_sites} for the scale benchmark.
name = "Scale Site {k + 1:02d}"
latitude_deg = {lat}
longitude_deg = {lon:.3f}
height_m = 1500
timezone = "{tz}"
min_alt_deg = 25
min_solar_elong_deg = 40
clear_fraction = {0.6 + 0.03 * (k % 7):.2f}

[instrument]
aperture_m = {aperture}
pixel_scale_arcsec = 0.6
read_noise_e = 9.0
zero_point_mag = {22.5 + 2.5 * __import__("math").log10(aperture / 0.6):.2f}
seeing_arcsec = 1.5
sky_mag_per_arcsec2 = 21.0
extinction_mag_per_airmass = 0.12
filter = "R"

[allocation]
hours_per_night = 4
"""


def campaign_toml(n_sites: int, nights: int, site_files: list[str]) -> str:
    sites = ",\n".join(f'    "{s}"' for s in site_files)
    return f"""# Scale benchmark (invented): the demo comet from {n_sites} sites for {nights} nights.
name = "Scale {n_sites} x {nights}"
target = "{TARGET.as_posix()}"
sites = [
{sites},
]
first_night = {FIRST_NIGHT}
nights = {nights}
seed = 20340316

[rotation]
min_period_h = 2.0
max_period_h = 30.0
double_peaked = true
phase_bins = 20

[blocks]
slot_minutes = 5
min_block_h = 1.0
max_block_h = 5.0
setup_minutes = 10
max_per_night = 2

[weather]
trials = 400

[diagnostics]
trials = 100
"""


def make_campaign(folder: Path, n_sites: int, nights: int) -> Path:
    """Write the invented site files and the campaign file into ``folder``; return the campaign path."""
    folder.mkdir(parents=True, exist_ok=True)
    names = []
    for k in range(n_sites):
        name = f"site{k + 1:02d}.toml"
        (folder / name).write_text(site_toml(k, n_sites))
        names.append(name)
    path = folder / f"campaign-{n_sites}x{nights}.toml"
    path.write_text(campaign_toml(n_sites, nights, names))
    return path


def _status_mb(key: str) -> float:
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith(key + ":"):
            return int(line.split()[1]) / 1024.0
    return float("nan")


def vm_hwm_mb() -> float:
    """Peak resident set size of this process (Linux /proc/self/status VmHWM), MB."""
    return _status_mb("VmHWM")


def vm_rss_mb() -> float:
    """Resident set size now (VmRSS), MB."""
    return _status_mb("VmRSS")


def child(campaign_path: str, out_dir: str) -> None:
    """One run: plan, write the folder (report included), re-render the report; print JSON timings."""
    t_start = time.perf_counter()
    sys.path.insert(0, str(ROOT))
    from planner.inputs.campaign import load_campaign
    from planner.outputs import planfolder
    from planner.outputs.planfolder import write_plan_folder
    from planner.outputs.report import write_report
    from planner.pipeline import plan_campaign
    from planner.sky.skydata import no_iers_download

    no_iers_download()
    first_render: list[float] = []

    def timed_report(folder):  # the first render, inside the folder write: every figure drawn
        t = time.perf_counter()
        write_report(folder)
        first_render.append(time.perf_counter() - t)

    planfolder.write_report = timed_report
    t_import = time.perf_counter()
    base_mb = vm_rss_mb()
    camp = load_campaign(campaign_path)
    target = camp.load_target()
    t0 = time.perf_counter()
    result = plan_campaign(camp, target)
    t1 = time.perf_counter()
    write_plan_folder(result, out_dir, force=True)
    t2 = time.perf_counter()
    write_report(out_dir)
    t3 = time.perf_counter()
    print(
        json.dumps(
            {
                "imports_s": t_import - t_start,
                "plan_s": t1 - t0,
                "folder_s": t2 - t1,
                "report_s": t3 - t2,
                "first_report_s": first_render[0],
                "total_s": t2 - t_start,
                "stages_s": result.timings_s,
                "objective_s": result.objective.seconds,
                "search": result.objective.to_dict()["local_search"],
                "peak_mb": vm_hwm_mb(),
                "imports_mb": base_mb,
            }
        )
    )


def run_once(work: Path, n_sites: int, nights: int) -> dict:
    camp = make_campaign(work / f"in-{n_sites}x{nights}", n_sites, nights)
    out = work / f"out-{n_sites}x{nights}"
    wall0 = time.perf_counter()
    proc = subprocess.run(
        [sys.executable, __file__, "--child", str(camp), str(out)],
        capture_output=True,
        text=True,
        env={**os.environ, "PYTHONPATH": str(ROOT)},
        check=False,
    )
    wall = time.perf_counter() - wall0
    if proc.returncode != 0:
        raise RuntimeError(f"{n_sites}x{nights} failed:\n{proc.stderr[-3000:]}")
    res = json.loads(proc.stdout.strip().splitlines()[-1])
    res["wall_s"] = wall
    return res


def fit_exponent(x: list[float], y: list[float]) -> float:
    """Slope of log y against log x (least squares)."""
    import numpy as np

    return float(np.polyfit(np.log(x), np.log(y), 1)[0])


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    size = ap.add_mutually_exclusive_group()
    size.add_argument("--quick", action="store_true", help="16 x 30 once, sweep 7-30 nights")
    size.add_argument("--full", action="store_true", help="3 repetitions; sweep 7-90 nights at 16 sites")
    ap.add_argument("--reps", type=int, default=None, help="repetitions per size (default 1 quick, 2, 3 full)")
    ap.add_argument("--sites", type=int, default=16)
    ap.add_argument("--nights", type=int, default=30)
    ap.add_argument("--child", nargs=2, metavar=("CAMPAIGN", "OUT"), help=argparse.SUPPRESS)
    args = ap.parse_args()
    if args.child:
        child(*args.child)
        return
    import numpy as np

    reps = args.reps or (1 if args.quick else 3 if args.full else 2)
    sweep_sites = 16 if args.full else 4
    sweep = (7, 15, 30) if args.quick else (7, 15, 30, 60, 90)
    sizes = [(args.sites, args.nights)] + [
        (sweep_sites, n) for n in sweep if (sweep_sites, n) != (args.sites, args.nights)
    ]
    print(
        f"phasewise plan --out on invented sites x nights (demo comet, 5-min slots, 400 weather trials, "
        f"100 injection trials); BLAS threads {os.environ['OPENBLAS_NUM_THREADS']}; {reps} interleaved "
        f"repetition(s), each a fresh process; medians (min-max). Machine: {os.cpu_count()} cores, shared."
    )
    runs: dict[tuple[int, int], list[dict]] = {s: [] for s in sizes}
    with tempfile.TemporaryDirectory(prefix="phasewise-scale-") as tmp:
        for _ in range(reps):
            for s in sizes:
                runs[s].append(run_once(Path(tmp), *s))

    def med(values: list[float]) -> str:
        v = np.asarray(values)
        return f"{np.median(v):7.1f} ({v.min():.1f}-{v.max():.1f})" if v.size > 1 else f"{v[0]:7.1f}"

    print(
        f"\n{'sites x nights':>14} {'plan s':>16} {'1st report s':>16} {'total s':>16} {'peak MB':>16}  "
        "stages (median s)        local search"
    )
    for s in sizes:
        r = runs[s]
        stages = {k: np.median([x["stages_s"][k] for x in r]) for k in r[0]["stages_s"]}
        opt = {k: np.median([x["objective_s"][k] for x in r]) for k in r[0]["objective_s"]}
        ls = r[0]["search"]
        print(
            f"{s[0]:>6} x {s[1]:<5} {med([x['plan_s'] for x in r]):>16} {med([x['first_report_s'] for x in r]):>16} "
            f"{med([x['total_s'] for x in r]):>16} {med([x['peak_mb'] for x in r]):>16}  "
            + ", ".join(f"{k} {v:.1f}" for k, v in stages.items())
            + f"; optimiser: {', '.join(f'{k} {v:.2f}' for k, v in opt.items())}; "
            f"{ls.get('evaluations')} moves of budget {ls.get('budget', '-')}, stopped: "
            f"{ls.get('stopped_by', 'budget' if ls.get('stopped_by_budget') else 'local optimum')}"
        )
    goal = runs.get((16, 30))
    if goal:
        t_goal = np.median([x["total_s"] for x in goal])
        m_goal = np.median([x["peak_mb"] for x in goal])
        plan_s = np.median([x["plan_s"] for x in goal])
        first = np.median([x["first_report_s"] for x in goal]) / plan_s
        again = np.median([x["report_s"] for x in goal]) / plan_s
        print(
            f"\n16 x 30: total {t_goal:.1f} s (goal <= 60 s), peak {m_goal:.0f} MB (goal <= 600 MB), "
            f"report / plan: first render {100 * first:.1f} % (goal <= 10 %), re-render from the figure cache "
            f"{100 * again:.1f} %"
        )
    nights = sorted(n for (k, n) in sizes if k == sweep_sites)
    if len(nights) >= 3:

        def medians(key, sub=None):
            rows = [runs[(sweep_sites, n)] for n in nights]
            return [np.median([(x[key][sub] if sub else x[key]) for x in r]) for r in rows]

        total, plan, peak = medians("total_s"), medians("plan_s"), medians("peak_mb")
        above = [
            p - np.median([x["imports_mb"] for x in runs[(sweep_sites, n)]]) for p, n in zip(peak, nights, strict=True)
        ]
        print(
            f"exponents against nights ({sweep_sites} sites, {nights[0]}-{nights[-1]} nights; goal <= 1.05): "
            f"plan time {fit_exponent(nights, plan):.2f}, whole command {fit_exponent(nights, total):.2f}, "
            f"peak memory {fit_exponent(nights, peak):.2f} (above the imports: {fit_exponent(nights, above):.2f})"
        )
        parts = {
            "windows": medians("stages_s", "windows"),
            "greedy": medians("objective_s", "greedy"),
            "local search": medians("objective_s", "local_search"),
            "diagnostics": medians("stages_s", "diagnostics"),
        }
        print(
            "  by stage: "
            + ", ".join(f"{k} {fit_exponent(nights, v):.2f} ({v[0]:.1f} -> {v[-1]:.1f} s)" for k, v in parts.items())
        )


if __name__ == "__main__":
    main()
