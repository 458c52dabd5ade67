"""What the commands share: output formats listed in ``--help``, the stamp on every JSON document, and
progress by stage on stderr.

Only light modules are imported here: ``phasewise --help`` must not load numpy, pandas or astropy.
"""

from __future__ import annotations

import sys
import time
from enum import StrEnum
from pathlib import Path

from planner.core.errors import InputError
from planner.core.version import __version__
from planner.outputs.layout import SCHEMA_VERSION


class TableFormat(StrEnum):
    """Output of ``ephem`` and ``windows``."""

    table = "table"
    csv = "csv"
    json = "json"
    ecsv = "ecsv"


def table_format(fmt: TableFormat | None, out: Path | None) -> str:
    """The format asked for, or the one ``--out``'s extension names (``.csv``, ``.json``, ``.ecsv``)."""
    if fmt is not None:
        return fmt.value
    suffix = out.suffix.lower().lstrip(".") if out is not None else ""
    return suffix if suffix in ("csv", "json", "ecsv") else "table"


def stamped(doc: dict) -> dict:
    """A JSON document with ``schema_version`` and ``phasewise_version`` first."""
    return {"schema_version": SCHEMA_VERSION, "phasewise_version": __version__, **doc}


def show_progress(flag: bool | None) -> bool:
    """``--progress/--no-progress``; by default only when stderr is a terminal."""
    return sys.stderr.isatty() if flag is None else flag


class StageProgress:
    """Progress through named stages on stderr, with the time left.

    ``stages`` maps each stage to its rough share of the run (measured on the demo campaign); the time
    left is the elapsed time scaled by the shares still to come. On a terminal it is a live bar (rich);
    elsewhere, when forced with ``--progress``, one line per stage. Calling the object with a stage name
    marks that stage's start; :meth:`fraction` moves within the current stage.
    """

    def __init__(self, stages: dict[str, float], enabled: bool, label: str = "phasewise") -> None:
        self.stages = stages
        self.total = float(sum(stages.values()))
        self.enabled = enabled
        self.label = label
        self.t0 = time.perf_counter()
        self.done = 0.0
        self.current: str | None = None
        self._bar = None
        self._task = None

    def __enter__(self) -> StageProgress:
        if self.enabled and sys.stderr.isatty():
            from rich.console import Console
            from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn, TimeRemainingColumn

            self._bar = Progress(
                TextColumn("{task.description:<28}"),
                BarColumn(),
                TextColumn("{task.percentage:>3.0f}%"),
                TimeElapsedColumn(),
                TextColumn("left"),
                TimeRemainingColumn(),
                console=Console(stderr=True),
                transient=True,
            )
            self._bar.start()
            self._task = self._bar.add_task(self.label, total=self.total)
        return self

    def __exit__(self, *exc) -> None:
        if self._bar is not None:
            self._bar.stop()
        if self.enabled and exc[0] is None:
            sys.stderr.write(f"{self.label}: done in {time.perf_counter() - self.t0:.0f} s\n")

    def __call__(self, stage: str) -> None:
        if self.current is not None:
            self.done += self.stages.get(self.current, 0.0)
        self.current = stage
        if not self.enabled:
            return
        n = list(self.stages).index(stage) + 1 if stage in self.stages else 0
        text = f"[{n}/{len(self.stages)}] {stage}"
        if self._bar is not None:
            self._bar.update(self._task, completed=self.done, description=text)
        else:
            elapsed = time.perf_counter() - self.t0
            left = f", about {elapsed * (self.total - self.done) / self.done:.0f} s left" if self.done > 0 else ""
            sys.stderr.write(f"{self.label}: {text} ({elapsed:.0f} s{left})\n")
            sys.stderr.flush()

    def fraction(self, value: float) -> None:
        """Progress inside the current stage, 0 to 1 (e.g. injection–recovery trials)."""
        if self._bar is not None and self.current is not None:
            share = self.stages.get(self.current, 0.0)
            self._bar.update(self._task, completed=self.done + share * min(max(value, 0.0), 1.0))


def exposure_rules(snr: float, min_exposure_s: float):
    """The light-curve exposure rules of ``--snr`` and ``--min-exposure`` (the campaign defaults otherwise);
    the longest exposure is raised to the floor when the floor lies above it."""
    from planner.inputs.settings import ExposureRules

    try:
        return ExposureRules(
            snr_target=snr,
            min_exposure_s=min_exposure_s,
            max_exposure_s=max(ExposureRules.max_exposure_s, min_exposure_s),
        )
    except InputError as exc:
        option = {"snr_target": "--snr", "min_exposure_s": "--min-exposure"}.get(exc.field, exc.field)
        raise InputError("command line", option, exc.message) from None
