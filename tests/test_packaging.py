"""The package as pip installs it: a wheel built from this checkout, installed into a fresh virtual
environment with no network (the dependencies come from the environment running the tests), runs
`phasewise --version` and the whole demo from its package data, outside any checkout."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import sysconfig
import zipfile
from pathlib import Path

import pytest

import planner
from tests.conftest import DEMO_DIR, ROOT


def _setuptools_can_build() -> str | None:
    """Why the wheel cannot be built offline here, or None."""
    try:
        import setuptools
    except ImportError:
        return "setuptools is not installed (the test extras install it)"
    major = int(setuptools.__version__.split(".")[0])
    if major < 77:
        return f"setuptools {setuptools.__version__} is older than the build requirement (>= 77, in the test extras)"
    return None


def _fresh_venv(tmp_path: Path) -> Path:
    """A virtual environment of its own that sees the running environment's packages (no network)."""
    venv = tmp_path / "venv"
    subprocess.run([sys.executable, "-m", "venv", "--without-pip", str(venv)], check=True, timeout=60)
    site = Path(
        subprocess.run(
            [str(venv / "bin" / "python"), "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"],
            check=True,
            capture_output=True,
            text=True,
        ).stdout.strip()
    )
    shared = [p for p in sys.path if p.endswith(("site-packages", "dist-packages")) and Path(p).is_dir()]
    shared.append(sysconfig.get_paths()["purelib"])
    (site / "zz_shared_dependencies.pth").write_text("\n".join(dict.fromkeys(shared)) + "\n")
    return venv


@pytest.mark.slow
def test_the_wheel_installs_and_runs_the_demo_from_its_package_data(tmp_path):
    reason = _setuptools_can_build()
    if reason:
        pytest.skip(reason)
    wheels, source = tmp_path / "wheels", tmp_path / "source"  # built from a copy: the checkout stays clean
    source.mkdir()
    for name in ("pyproject.toml", "README.md"):
        shutil.copy(ROOT / name, source / name)
    shutil.copytree(ROOT / "planner", source / "planner", ignore=shutil.ignore_patterns("__pycache__"))
    build = subprocess.run(
        [sys.executable, "-m", "pip", "wheel", ".", "--no-deps", "--no-build-isolation", "--no-index", "-w", wheels],
        cwd=source,
        capture_output=True,
        text=True,
        timeout=180,
    )
    assert build.returncode == 0, build.stdout[-2000:] + build.stderr[-2000:]
    (wheel,) = wheels.glob("phasewise-*.whl")
    assert wheel.name.startswith(f"phasewise-{planner.__version__}-")
    names = zipfile.ZipFile(wheel).namelist()
    shipped = {n.removeprefix("planner/data/demo/") for n in names if n.startswith("planner/data/demo/")}
    assert shipped == {str(p.relative_to(DEMO_DIR)) for p in DEMO_DIR.rglob("*") if p.suffix in (".toml", ".csv")}

    venv = _fresh_venv(tmp_path)
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "PYTHONHOME")}
    env.update(OPENBLAS_NUM_THREADS="1", PIP_NO_INDEX="1")
    py = str(venv / "bin" / "python")
    install = subprocess.run(
        [py, "-m", "pip", "install", "--no-deps", "--no-index", str(wheel)],
        cwd=tmp_path,
        env=env,
        capture_output=True,
        text=True,
        timeout=180,
    )
    assert install.returncode == 0, install.stdout[-2000:] + install.stderr[-2000:]

    def phasewise(*args: str) -> subprocess.CompletedProcess:
        return subprocess.run(
            [str(venv / "bin" / "phasewise"), *args], cwd=tmp_path, env=env, capture_output=True, text=True, timeout=300
        )

    where = subprocess.run(
        [py, "-c", "import planner; print(planner.__file__)"], cwd=tmp_path, env=env, capture_output=True, text=True
    )
    assert where.stdout.strip().startswith(str(venv)), where.stdout + where.stderr  # the wheel, not the checkout
    version = phasewise("--version")
    assert version.returncode == 0 and version.stdout == f"phasewise {planner.__version__}\n"
    demo = phasewise("demo", "--out", str(tmp_path / "demo"))
    assert demo.returncode == 0, demo.stderr[-2000:]
    for name in ("plan.csv", "plan.ecsv", "report.html", "calendars/karoo-ridge.ics"):
        assert (tmp_path / "demo" / name).is_file(), name
