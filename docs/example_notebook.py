# %% [markdown]
# # phasewise from a notebook
#
# A worked session in cells (`# %%`, the "percent" format that Jupyter with jupytext, VS Code and
# Spyder open as a notebook; `python docs/example_notebook.py` runs it as a script, and the tests run it
# too). Everything here is the documented Python API: `import planner`. Times may be astropy `Time`,
# angles and durations astropy `Quantity`, sites come from an `EarthLocation`, and tables come back as
# astropy `QTable`s with units. The comet and the sites are the bundled, invented demo ones.

# %%
import tempfile
import warnings
from pathlib import Path

import astropy.units as u
import numpy as np
from astropy.coordinates import EarthLocation
from astropy.table import QTable
from astropy.time import Time

import planner
from planner.demo import DEMO_DIR

# astropy warns that UTC in 2034 is "dubious" (leap seconds are announced months ahead): harmless here.
warnings.filterwarnings("ignore", message=".*dubious year")

print("phasewise", planner.__version__)

# %% [markdown]
# ## The target and two sites
# A target file (or MPC one-line orbits) loads with `planner.load_target`; a `Target` can also be built
# in Python, and is checked when built, with the same one-line messages as a file.

# %%
comet = planner.load_target(DEMO_DIR / "c2034-b3-quillfeather.toml")
karoo = planner.load_site(DEMO_DIR / "sites" / "karoo-ridge.toml")
andes = planner.Site.from_earth_location(
    "Andes test site",
    EarthLocation.from_geodetic(lon=-70.40 * u.deg, lat=-24.62 * u.deg, height=2.6 * u.km),
    timezone="America/Santiago",
    min_alt_deg=25 * u.deg,
    instrument=karoo.instrument,
)
try:
    planner.Site(name="typo", latitude_deg=200, longitude_deg=0, timezone="Mars/Olympus")
except planner.InputError as err:
    print("refused:", err)

# %% [markdown]
# ## Geometry over one night, as a QTable

# %%
night = Time("2034-03-19T22:00", scale="utc") + np.arange(0, 9) * u.h
geometry = planner.as_qtable(planner.geometry(comet, night, [andes]))
print(geometry["time_utc", "alt_deg", "helio_dist_au", "obs_dist_au", "mag_pred"])
closest = geometry["obs_dist_au"].min().to(u.km)
print(f"closest approach this night: {closest:.3e}")

# %% [markdown]
# ## Observable windows, the grid step as a Quantity

# %%
windows = planner.observable_windows(comet, [karoo, andes], Time("2034-03-17", scale="utc"), 2, step_s=10 * u.min)
print(windows[["site", "night", "start_utc", "end_utc", "hours", "reason"]])

# %% [markdown]
# ## A campaign built in memory, planned
# No campaign file is needed: a `Campaign` holds `Site` and `Target` objects. (Few weather and
# injection trials here, to keep the cell quick; the defaults are 200 and 100.)

# %%
campaign = planner.Campaign(
    name="Notebook week",
    sites=[karoo, andes],
    first_night="2034-03-17",
    nights=2,
    target=comet,
    rotation=planner.Rotation(min_period_h=3 * u.h, max_period_h=20 * u.h, phase_bins=12, oversample=3),
    weather_trials=20,
    check_trials=10,
)
result = planner.plan_campaign(campaign)
blocks = planner.as_qtable(result.blocks)
print(blocks["site", "start_utc", "end_utc", "hours", "exposure_s", "max_airmass"])
print("plan vs baseline, worst-period coverage:", result.comparison.worst_period_coverage)

# %% [markdown]
# ## What the planned times can tell: the check, periods as Quantities

# %%
check = planner.check_times(
    blocks["start_utc"] + (blocks["end_utc"] - blocks["start_utc"]) / 2,
    min_period_h=180 * u.min,
    max_period_h=0.5 * u.day,
    trials=0,
)
print("worst coverage over 3–12 h:", round(float(np.min(check.coverage)), 2))

# %% [markdown]
# ## Tables to files, units kept
# Every CSV of a plan folder has an ECSV twin; here the blocks alone, read back with astropy.

# %%
folder = Path(tempfile.mkdtemp())
blocks.write(folder / "blocks.ecsv", format="ascii.ecsv")
again = QTable.read(folder / "blocks.ecsv", format="ascii.ecsv")
print(again["exposure_s"].unit, again["start_utc"].scale, len(again), "blocks")
