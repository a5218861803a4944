"""Packaging: the lowest-versions constraints stay in step with pyproject.toml, the
lower bounds the issue found wrong are raised, the license is an SPDX expression, and
the demo data ship inside the wheel (so 'solsphere fit --demo' works once installed)."""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tomllib
import zipfile
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "tools"))

import lowest_versions  # noqa: E402


def _project() -> dict:
    return tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]


def test_constraints_file_is_up_to_date():
    assert (ROOT / "constraints/lowest.txt").read_text() == lowest_versions.lowest(), \
        "run python tools/lowest_versions.py"


def test_lowest_versions_take_the_higher_bound_and_a_series(tmp_path):
    p = tmp_path / "pyproject.toml"
    p.write_text('[project]\nname="x"\ndependencies=["numpy>=1.26", "a>=2.0.1; os_name==\'nt\'"]\n'
                 '[project.optional-dependencies]\ntest=["numpy>=2.1"]\nstructure=[]\n')
    text = lowest_versions.lowest(p)
    assert "numpy==2.1.*\n" in text and "a==2.0.1; os_name=='nt'\n" in text


def test_gunicorn_bound_has_the_setting_the_app_uses():
    # solsphere app --workers sets control_socket_disable, first in gunicorn 25.1
    deps = _project()["dependencies"]
    assert any(d.startswith("gunicorn>=25.1") for d in deps)


def test_license_is_an_spdx_expression():
    assert _project()["license"] == "MIT"


def test_make_test_lowest_is_wired_into_ci():
    assert "make test-lowest" in (ROOT / ".ci/run").read_text()
    assert "test-lowest:" in (ROOT / "Makefile").read_text()


@pytest.mark.slow
def test_the_installed_wheel_fits_its_demo_outside_the_repository(tmp_path):
    """Build the wheel, install it (no dependencies) into a folder of its own, and run
    'solsphere fit --demo' from another folder with that copy first on the path (about
    half a minute)."""
    r = subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "--no-build-isolation",
                        "-q", "-w", str(tmp_path / "dist"), str(ROOT)],
                       capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    wheel = next((tmp_path / "dist").glob("solsphere-*.whl"))
    names = zipfile.ZipFile(wheel).namelist()
    assert "solsphere/data/demo/varnish_binder.csv" in names
    assert "solsphere/data/demo/three_binders.xlsx" in names
    target = tmp_path / "site"
    r = subprocess.run([sys.executable, "-m", "pip", "install", "--no-deps", "-q", "--target",
                        str(target), str(wheel)], capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    env = {**os.environ, "PYTHONPATH": str(target)}
    r = subprocess.run([sys.executable, "-c", "import solsphere, sys; print(solsphere.__file__)"],
                       capture_output=True, text=True, cwd=elsewhere, env=env)
    assert r.stdout.strip().startswith(str(target)), r.stdout  # the installed copy, not the repo
    r = subprocess.run([sys.executable, "-m", "solsphere", "fit", "--demo", "--json",
                        "--no-influence"], capture_output=True, text=True, cwd=elsewhere, env=env)
    assert r.returncode == 0, r.stderr
    assert json.loads(r.stdout)["n_trials"] > 10
