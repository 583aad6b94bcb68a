"""The released form works: the wheel and sdist carry the templates and reference cases, and the
wheel installed alone into a fresh virtual environment runs every starter from an empty folder.

Issue 16's acceptance check (common practice for a packaged CLI: test the artefact, not the
checkout). It builds with ``python -m build`` (the ``build`` package, a test dependency) and
installs the wheel with pip from the package registry into an environment without this
checkout's editable install.
"""

from __future__ import annotations

import os
import subprocess
import sys
import tarfile
import venv
import zipfile
from pathlib import Path

import pytest

from budget import __version__
from budget.commands.new import STARTERS
from tests.paths import REFERENCES, ROOT, TEMPLATES

NETWORK_WORDS = ("Could not find a version", "No matching distribution", "NewConnectionError",
                 "Temporary failure in name resolution", "Network is unreachable")


def _run(cmd, cwd, env=None, timeout=600):
    return subprocess.run([str(c) for c in cmd], cwd=cwd, env=env, capture_output=True, text=True,
                          timeout=timeout)


@pytest.fixture(scope="module")
def artefacts(tmp_path_factory):
    out = tmp_path_factory.mktemp("dist")
    res = _run([sys.executable, "-m", "build", "--outdir", out, ROOT], cwd=out)
    assert res.returncode == 0, res.stdout[-2000:] + res.stderr[-2000:]
    (wheel,) = out.glob("thetabudget-*.whl")
    (sdist,) = out.glob("thetabudget-*.tar.gz")
    return wheel, sdist


def _shipped(folder: Path) -> set[str]:
    return {p.name for p in folder.iterdir() if p.is_file() and p.suffix in (".toml", ".csv", ".dat", ".md")}


def test_wheel_and_sdist_carry_templates_and_references(artefacts):
    wheel, sdist = artefacts
    names = set(zipfile.ZipFile(wheel).namelist())
    for folder, pkg in ((TEMPLATES, "budget/templates"), (REFERENCES, "budget/references")):
        missing = {f for f in _shipped(folder) if f"{pkg}/{f}" not in names}
        assert not missing, f"the wheel lacks {missing}"
    with tarfile.open(sdist) as tar:
        members = {Path(m).relative_to(Path(m).parts[0]).as_posix() for m in tar.getnames() if "/" in m}
    for folder in (TEMPLATES, REFERENCES):
        missing = {f for f in _shipped(folder) if f"{folder.name}/{f}" not in members}
        assert not missing, f"the sdist lacks {missing}"


def test_wheel_alone_runs_every_starter_from_an_empty_folder(artefacts, tmp_path):
    wheel, _ = artefacts
    env_dir = tmp_path / "env"
    venv.EnvBuilder(with_pip=True, system_site_packages=False).create(env_dir)
    bindir = env_dir / ("Scripts" if os.name == "nt" else "bin")
    py = bindir / "python"
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "PYTHONHOME", "VIRTUAL_ENV")}
    res = _run([py, "-m", "pip", "install", "--quiet", wheel], cwd=tmp_path, env=env, timeout=1200)
    if res.returncode != 0 and any(w in res.stdout + res.stderr for w in NETWORK_WORDS):
        pytest.skip("the package registry cannot be reached to install the wheel's dependencies: "
                    + (res.stderr.strip().splitlines() or ["?"])[-1])
    assert res.returncode == 0, res.stderr[-3000:]
    work = tmp_path / "empty"
    work.mkdir()
    where = _run([py, "-c", "import budget; print(budget.__file__)"], cwd=work, env=env)
    assert Path(where.stdout.strip()).resolve().is_relative_to(env_dir.resolve()), where.stdout

    tool = bindir / "thetabudget"
    version = _run([py, "-m", "budget", "--version"], cwd=work, env=env)
    assert version.returncode == 0 and version.stdout.strip() == f"thetabudget {__version__}"
    selftest = _run([tool, "selftest"], cwd=work, env=env)
    assert selftest.returncode == 0, selftest.stdout[-3000:] + selftest.stderr[-2000:]
    assert f"thetabudget {__version__}" in selftest.stdout
    assert str(env_dir.resolve()) in selftest.stdout.replace("\n", "")  # read from the install
    for kind in sorted(STARTERS):
        name = f"{kind}.toml"
        assert _run([tool, "new", kind, name], cwd=work, env=env).returncode == 0
        check = _run([tool, "check", name], cwd=work, env=env)
        assert check.returncode == 0 and "valid" in check.stdout, check.stderr
        run = _run([tool, "run", name, "--trials", "4000", "--seed", "1", "--quiet"], cwd=work, env=env)
        assert run.returncode == 0, run.stderr[-3000:]
    assert sorted(p.name for p in work.iterdir()) == sorted(f"{k}.toml" for k in STARTERS)
