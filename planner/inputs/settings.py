"""The campaign's settings types, each default written once, here.

Loaders fill them from files and options; the stages below take them as arguments. Nothing else in
the package repeats a default of these settings: a command without a campaign file uses the same
types with their defaults, so `plan`, `check`, `ephem` and `windows` model the same frames.
"""

from __future__ import annotations

from dataclasses import dataclass


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


@dataclass(frozen=True)
class BlockRules:
    """How telescope time is cut: the slot grid, visit lengths and the set-up at the start of each visit."""

    slot_minutes: float = 5.0
    min_block_h: float = 1.0
    max_block_h: float = 4.0
    setup_minutes: float = 10.0
    #: Most visits one site makes in one night.
    max_per_night: int = 2

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
