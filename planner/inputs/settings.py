"""The campaign's settings types, each default written once, here.

Loaders fill them from files and options; the stages below take them as arguments. Nothing else in
the package repeats a default of these settings: a command without a campaign file uses the same
types with their defaults, so `plan`, `check`, `ephem` and `windows` model the same frames. The
allowed range of each field is written once too (the ``*_LIMITS`` tables): the campaign loader reads
with them, and every type checks itself when built, so a bad value built in Python is refused with the
same words as a bad file.
"""

from __future__ import annotations

from dataclasses import dataclass

from planner.core.errors import InputError
from planner.core.limits import PYTHON, Limit, check_limits

ROTATION_LIMITS = {
    "min_period_h": Limit(0.05, 2000.0),
    "max_period_h": Limit(0.05, 2000.0),
    "phase_bins": Limit(4, 200, whole=True),
    "oversample": Limit(1.0, 100.0),
    "max_plan_periods": Limit(100, 1_000_000, whole=True),
}
BLOCK_LIMITS = {
    "slot_minutes": Limit(1.0, 60.0),
    "min_block_h": Limit(0.0, 24.0, lo_open=True),
    "max_block_h": Limit(0.0, 24.0, lo_open=True),
    "setup_minutes": Limit(0.0, 120.0),
    "max_per_night": Limit(1, 20, whole=True),
}
WEIGHT_LIMITS = {
    name: Limit(0.0, 100.0)
    for name in ("alias", "cadence", "coverage", "discrimination", "hours", "quality", "robustness")
}
EXPOSURE_LIMITS = {
    "snr_target": Limit(1.0, 10_000.0),
    "min_exposure_s": Limit(0.1, 3600.0),
    "max_exposure_s": Limit(0.1, 3600.0),
    "max_airmass": Limit(1.0, 40.0),
    "sys_err_mag_per_airmass": Limit(0.0, 1.0, lo_open=True),
}
COMPUTE_LIMITS = {"workers": Limit(1, 4096, whole=True, optional=True)}


@dataclass(frozen=True)
class Rotation:
    """Candidate rotation periods and light-curve assumptions."""

    min_period_h: float = 2.0
    max_period_h: float = 30.0
    #: An elongated nucleus shows two maxima per rotation (common practice): the photometric
    #: period is half the rotation period.
    double_peaked: bool = True
    amplitude_mag: tuple[float, float] = (0.1, 0.5)
    phase_bins: int = 20
    #: Period-grid oversampling (frequency step 1/(oversample · span)).
    oversample: float = 10.0
    #: The optimiser counts coverage on at most this many of the trial periods (evenly thinned in
    #: frequency beyond it; planner.diagnostics.coverage.thin_periods); checks use every period.
    max_plan_periods: int = 4000

    def __post_init__(self) -> None:
        check_limits(self, ROTATION_LIMITS, PYTHON)
        if self.max_period_h <= self.min_period_h:
            raise InputError(
                PYTHON, "max_period_h", f"{self.max_period_h:g} must be above min_period_h ({self.min_period_h:g})"
            )
        amp = self.amplitude_mag
        ok = isinstance(amp, (tuple, list)) and len(amp) == 2 and all(isinstance(a, (int, float)) for a in amp)
        if not ok or not (0.0 < amp[0] <= amp[1] <= 5.0):
            raise InputError(
                PYTHON, "amplitude_mag", f"{list(amp) if ok else amp} must be [low, high] with 0 < low <= high <= 5"
            )
        object.__setattr__(self, "amplitude_mag", (float(amp[0]), float(amp[1])))
        if not isinstance(self.double_peaked, bool):
            raise InputError(PYTHON, "double_peaked", f"{self.double_peaked!r} is not true or false")


@dataclass(frozen=True)
class BlockRules:
    """How telescope time is cut: the slot grid, visit lengths and the set-up at the start of each visit."""

    slot_minutes: float = 5.0
    min_block_h: float = 1.0
    max_block_h: float = 4.0
    setup_minutes: float = 10.0
    #: Most visits one site makes in one night.
    max_per_night: int = 2

    def __post_init__(self) -> None:
        check_limits(self, BLOCK_LIMITS, PYTHON)
        if self.max_block_h < self.min_block_h:
            raise InputError(PYTHON, "max_block_h", f"{self.max_block_h:g} is below min_block_h ({self.min_block_h:g})")
        if self.min_block_h * 60.0 < self.slot_minutes:
            raise InputError(
                PYTHON, "min_block_h", f"{self.min_block_h:g} h is shorter than one slot ({self.slot_minutes:g} min)"
            )
        if self.setup_minutes >= self.min_block_h * 60.0:
            raise InputError(
                PYTHON,
                "setup_minutes",
                f"{self.setup_minutes:g} min leaves no science time in a {self.min_block_h:g} h block",
            )

    @property
    def slot_s(self) -> float:
        return self.slot_minutes * 60.0


@dataclass(frozen=True)
class Weights:
    """Weights of the objective's terms (see planner.schedule.objective)."""

    coverage: float = 1.0
    robustness: float = 0.5
    alias: float = 0.5
    cadence: float = 0.5
    hours: float = 0.1
    #: Photometric quality of the time used (planner.schedule.quality): favours low airmass and precise sites.
    quality: float = 1.0
    #: Telling apart the candidate periods of a fitted light curve (re-planning from a log with
    #: magnitudes; planner.schedule.discrimination). As much as coverage: separating the candidates the
    #: data left is what such a re-plan is for, as covering their phases is. Unused without candidates.
    discrimination: float = 1.0

    def __post_init__(self) -> None:
        check_limits(self, WEIGHT_LIMITS, PYTHON)
        if self.coverage <= 0.0:
            raise InputError(PYTHON, "coverage", "must be above 0 (coverage is what the plan is for)")


@dataclass(frozen=True)
class Compute:
    """Where the Monte Carlo trials run (weather trials of ``plan``, injection–recovery of ``plan`` and
    ``check``): in blocks with their own random streams, so the results depend on the seed only.

    ``workers``: local processes (None: every available core, used when the trials are many enough to
    pay for starting them; 1: in this process). ``dask_address``: a Dask scheduler (``tcp://host:8786``)
    to send the blocks to instead (the optional ``dask`` extra).
    """

    workers: int | None = None
    dask_address: str | None = None

    def __post_init__(self) -> None:
        check_limits(self, COMPUTE_LIMITS, PYTHON)
        if self.dask_address is not None and (not isinstance(self.dask_address, str) or not self.dask_address.strip()):
            raise InputError(PYTHON, "dask_address", f"{self.dask_address!r} is not a scheduler address")


@dataclass(frozen=True)
class ExposureRules:
    """How light-curve frames are exposed and how precise a point is (campaign table ``[photometry]``).

    Observers rarely take light-curve frames shorter than ~30 s even on bright targets
    (scintillation, readout overhead, data volume; common practice); trailing may still cut an
    exposure below the floor.
    """

    #: S/N per exposure the exposure time aims for.
    snr_target: float = 30.0
    min_exposure_s: float = 30.0
    max_exposure_s: float = 300.0
    #: Soft airmass limit: slots above it earn no quality credit (common practice: X below ~2).
    max_airmass: float = 2.0
    #: Photometric error per unit airmass left by extinction changes (planner.schedule.quality), mag.
    sys_err_mag_per_airmass: float = 0.005

    def __post_init__(self) -> None:
        check_limits(self, EXPOSURE_LIMITS, PYTHON)
        if self.max_exposure_s < self.min_exposure_s:
            raise InputError(
                PYTHON,
                "max_exposure_s",
                f"{self.max_exposure_s:g} is below min_exposure_s ({self.min_exposure_s:g})",
            )
