"""The rule profiles and part classes live once, in rules/, and every way of installing
frontcheck finds them: a wheel built from the tracked files (as `pip install .` from a clean
clone builds it) carries them as frontcheck/rules, and a checkout or editable install reads
rules/ in place. Outside reference: the wheel is built by pip and setuptools themselves."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest

import frontcheck
from frontcheck.profiles import shipped_dir

REPO = Path(__file__).resolve().parent.parent


def test_checkout_reads_rules_in_place():
    if Path(frontcheck.__file__).resolve().parent != REPO / "frontcheck":
        pytest.skip("frontcheck is imported from an installed wheel, not from this checkout")
    assert shipped_dir() == REPO / "rules"
    assert shipped_dir("parts") == REPO / "rules" / "parts"
    assert not (REPO / "frontcheck" / "data").exists()      # no second copy


@pytest.fixture(scope="module")
def wheel(tmp_path_factory) -> Path:
    tmp = tmp_path_factory.mktemp("wheel")
    src = tmp / "clone"
    tracked = subprocess.run(["git", "ls-files", "-z"], cwd=REPO, capture_output=True,
                             check=True).stdout.decode().split("\0")
    for name in filter(None, tracked):
        if (REPO / name).is_file():
            (src / name).parent.mkdir(parents=True, exist_ok=True)
            shutil.copy2(REPO / name, src / name)
    r = subprocess.run([sys.executable, "-m", "pip", "wheel", "-q", "--no-deps", "-w",
                        str(tmp / "dist"), str(src)], capture_output=True, text=True, timeout=600)
    if r.returncode != 0:
        if os.environ.get("FRONTCHECK_REQUIRE_ORACLES"):
            pytest.fail(f"pip could not build the wheel:\n{r.stderr[-2000:]}")
        pytest.skip("pip could not build the wheel (it needs setuptools from the package index)")
    (whl,) = (tmp / "dist").glob("frontcheck-*.whl")
    return whl


def test_wheel_carries_every_module_and_rules_once(wheel):
    names = zipfile.ZipFile(wheel).namelist()
    rules = sorted(n for n in names if n.endswith(".toml"))
    expected = sorted("frontcheck/" + str(p.relative_to(REPO))
                      for p in (REPO / "rules").rglob("*.toml"))
    assert rules == expected
    modules = set(subprocess.run(["git", "ls-files", "frontcheck/*.py"], cwd=REPO, text=True,
                                 capture_output=True, check=True).stdout.split())
    assert "frontcheck/profiles.py" in modules
    assert modules <= set(names), sorted(modules - set(names))


def test_installed_wheel_loads_profiles_and_part_classes(wheel, tmp_path):
    site = tmp_path / "site"
    zipfile.ZipFile(wheel).extractall(site)
    probe = (
        "import frontcheck, pathlib\n"
        "from frontcheck.profiles import shipped_dir\n"
        "from frontcheck.checks import load_profile\n"
        "from frontcheck.parts import PartLibrary\n"
        f"site = pathlib.Path({str(site)!r}).resolve()\n"
        "assert pathlib.Path(frontcheck.__file__).resolve().parent == site / 'frontcheck'\n"
        "assert shipped_dir() == site / 'frontcheck' / 'rules'\n"
        "strict = load_profile('strict')\n"
        "assert strict['headroom']['min_margin_v'] == 0.1\n"
        "assert strict['headroom']['severity'] == 'error'   # from default\n"
        "assert PartLibrary.load(None).classes\n"
        "print('ok')\n")
    env = dict(os.environ, PYTHONPATH=str(site))
    r = subprocess.run([sys.executable, "-c", probe], cwd=tmp_path, env=env,
                       capture_output=True, text=True, timeout=120)
    assert r.returncode == 0 and r.stdout.strip() == "ok", r.stderr
