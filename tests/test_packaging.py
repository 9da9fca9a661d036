"""Installing Starkiln puts one name into site-packages: ``starkiln``.

The wheel is built from this checkout and installed into a fresh virtual environment;
the test lists what the installation added (the wheel's RECORD and the folder itself) and
runs the installed package. The wheel layout is the one of the Python packaging
specifications (PEP 427 wheel format, PEP 376 RECORD; common practice for checks like this).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import sysconfig
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent


@pytest.fixture(scope="module")
def installed(tmp_path_factory):
    """(venv folder, its site-packages) with the freshly built wheel installed, no deps."""
    tmp = tmp_path_factory.mktemp("wheel")
    env = dict(os.environ, PIP_DISABLE_PIP_VERSION_CHECK="1")
    build = subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "-q", "-w",
                            str(tmp / "dist"), str(ROOT)], capture_output=True, text=True,
                           env=env, timeout=600)
    assert build.returncode == 0, build.stderr[-2000:]
    wheels = list((tmp / "dist").glob("starkiln-*.whl"))
    assert len(wheels) == 1
    venv = tmp / "venv"
    subprocess.run([sys.executable, "-m", "venv", "--without-pip", str(venv)], check=True,
                   timeout=120)
    python = venv / ("Scripts/python.exe" if os.name == "nt" else "bin/python")
    inst = subprocess.run([sys.executable, "-m", "pip", "--python", str(python), "install",
                           "--no-deps", "--no-index", "-q", str(wheels[0])],
                          capture_output=True, text=True, env=env, timeout=600)
    assert inst.returncode == 0, inst.stderr[-2000:]
    purelib = subprocess.run([str(python), "-c",
                              "import sysconfig; print(sysconfig.get_paths()['purelib'])"],
                             capture_output=True, text=True, check=True).stdout.strip()
    return venv, Path(purelib), wheels[0]


def test_only_starkiln_is_installed(installed):
    venv, site, _ = installed
    names = {p.name for p in site.iterdir()
             if p.name not in ("__pycache__", "_virtualenv.py", "_virtualenv.pth")}
    dist_info = {n for n in names if n.endswith(".dist-info")}
    assert dist_info and all(n.startswith("starkiln-") for n in dist_info)
    assert names - dist_info == {"starkiln"}


def test_the_record_holds_one_top_level_name(installed):
    _, site, _ = installed
    record = next(site.glob("starkiln-*.dist-info")) / "RECORD"
    tops = set()
    for line in record.read_text().splitlines():
        path = line.split(",")[0]
        if path.startswith("..") or ".dist-info/" in path:
            continue  # the console script lives under bin/, outside site-packages
        tops.add(path.split("/")[0])
    assert tops == {"starkiln"}
    top_level = next(site.glob("starkiln-*.dist-info")) / "top_level.txt"
    if top_level.exists():
        assert top_level.read_text().split() == ["starkiln"]


def test_the_installed_package_runs(installed, tmp_path):
    venv, site, _ = installed
    # The fresh venv has no numpy; borrow this interpreter's dependencies, but import
    # starkiln from the fresh installation (it comes first on the path).
    deps = sysconfig.get_paths()["purelib"]
    env = dict(os.environ, PYTHONPATH=os.pathsep.join([str(site), deps]))
    code = ("import json, starkiln, starkiln.engine, starkiln.cli.main, starkiln.assets\n"
            "from starkiln.assets import asset_path\n"
            "print(json.dumps({'file': starkiln.__file__,"
            " 'asset': asset_path('dome_projector.json').is_file(),"
            " 'hex': str(starkiln.render(starkiln.Settings(), 6500.0).hex())}))\n")
    r = subprocess.run([sys.executable, "-S", "-c", code], cwd=tmp_path, env=env,
                       capture_output=True, text=True, timeout=120)
    assert r.returncode == 0, r.stderr[-2000:]
    info = json.loads(r.stdout)
    assert Path(info["file"]).is_relative_to(site)
    assert info["asset"] is True
    assert info["hex"].startswith("#")
    m = subprocess.run([sys.executable, "-S", "-m", "starkiln", "colour", "--temperature", "6500",
                        "--json"], cwd=tmp_path, env=env, capture_output=True, text=True,
                       timeout=120)
    assert m.returncode == 0, m.stderr[-2000:]
    assert json.loads(m.stdout)["temperature_K"] == 6500.0
    script = venv / ("Scripts/starkiln.exe" if os.name == "nt" else "bin/starkiln")
    assert script.exists()
    assert "starkiln.cli.main" in script.read_text(errors="replace")


def test_python_dash_m_starkiln_in_this_environment(python_run):
    r = subprocess.run([sys.executable, "-m", "starkiln", "--version"], capture_output=True,
                       text=True, timeout=60)
    assert r.returncode == 0 and r.stdout.startswith("starkiln "), r.stderr
