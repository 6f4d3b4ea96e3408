"""The jobset step: KiCad 9's (and 10's, where present) ``kicad-cli jobset run`` runs docs/frontcheck.kicad_jobset (an
ERC job and frontcheck's ``special_execute`` step) on a sample project, inside KiCad 9's
Debian root, with frontcheck installed there from a wheel built here, as a user would.

What KiCad does here is KiCad's own behaviour, observed with 9.0.2: a step's exit status 5
marks the job failed and keeps the output files, any other non-zero status discards them, the
step's standard output is recorded as <job id>.log in the output folder, and kicad-cli exits
non-zero when a job failed. The root gets Debian's python3-venv, numpy, networkx and rich
(apt inside the root, once); the venv lives in a host folder mounted into the root.
"""

from __future__ import annotations

import json
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from conftest import REPO
from kicad_root import kicad_root, mounted

pytestmark = pytest.mark.oracle

JOBSET = REPO / "docs" / "frontcheck.kicad_jobset"
ROOT_PACKAGES = ("python3-venv", "python3-numpy", "python3-networkx", "python3-rich")
UUID = re.compile(r"^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$")


def _ensure_packages(root: Path) -> None:
    """Debian's Python packages frontcheck needs, inside the KiCad root."""
    have = subprocess.run(["chroot", str(root), "dpkg", "-s", *ROOT_PACKAGES],
                          capture_output=True, text=True)
    if have.returncode == 0:
        return
    install = ["chroot", str(root), "env", "DEBIAN_FRONTEND=noninteractive", "apt-get",
               "install", "-y", "-qq", "--no-install-recommends", *ROOT_PACKAGES]
    res = subprocess.run(install, capture_output=True, text=True, timeout=900)
    if res.returncode != 0:     # stale package lists: refresh once
        subprocess.run(["chroot", str(root), "apt-get", "update", "-qq"], capture_output=True,
                       timeout=900)
        res = subprocess.run(install, capture_output=True, text=True, timeout=900)
    assert res.returncode == 0, res.stdout[-2000:] + res.stderr[-2000:]


def _build_wheel(dest: Path) -> Path:
    """A wheel of frontcheck, built from a copy of the sources (the build leaves files)."""
    src = dest / "src"
    shutil.copytree(REPO / "frontcheck", src / "frontcheck",
                    ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copytree(REPO / "rules", src / "rules")          # installed as frontcheck/rules
    for name in ("pyproject.toml", "setup.py", "README.md"):
        shutil.copy(REPO / name, src / name)
    res = subprocess.run([sys.executable, "-m", "pip", "wheel", "-q", "--no-deps", "-w",
                          str(dest), str(src)], capture_output=True, text=True, timeout=600)
    assert res.returncode == 0, res.stderr[-2000:]
    # the one run-time dependency KiCad's root has no Debian package for: its wheel from the
    # package index, installed beside frontcheck's
    res = subprocess.run([sys.executable, "-m", "pip", "download", "-q", "--no-deps",
                          "--only-binary", ":all:", "-d", str(dest), "schemdraw>=0.23"],
                         capture_output=True, text=True, timeout=600)
    assert res.returncode == 0, res.stderr[-2000:]
    return next(dest.glob("frontcheck-*.whl"))


@pytest.fixture(scope="module")
def wheel(tmp_path_factory) -> Path:
    return _build_wheel(tmp_path_factory.mktemp("wheel"))


@pytest.fixture(scope="module", params=[9, 10], ids=["kicad9", "kicad10"])
def root_venv(request, wheel, tmp_path_factory):
    """(root, venv, major): a venv inside KiCad's root (9; 10 where this machine has it) with
    frontcheck installed from its wheel."""
    root = kicad_root(request.param)
    _ensure_packages(root)
    wheels = wheel.parent
    venv = tmp_path_factory.mktemp("root-venv")
    with mounted(root, wheels, venv):
        res = subprocess.run(
            ["chroot", str(root), "sh", "-c",
             f'python3 -m venv --system-site-packages "{venv}" && '
             f'"{venv}/bin/pip" install -q --no-index --find-links "{wheels}" "{wheel}"'],
            capture_output=True, text=True, timeout=600)
    assert res.returncode == 0, res.stdout[-2000:] + res.stderr[-2000:]
    return root, venv, request.param


def _run_jobset(root: Path, venv: Path, project: Path) -> subprocess.CompletedProcess:
    """kicad-cli jobset run on the project, the step's python3 being the venv's."""
    work_dirs = {p.name for p in (root / "tmp").iterdir()}
    try:
        with mounted(root, project, venv):
            return subprocess.run(
                ["chroot", str(root), "env", f"PATH={venv}/bin:/usr/bin:/bin",
                 "kicad-cli", "jobset", "run", "--file",
                 str(project / "frontcheck.kicad_jobset"),
                 str(project / f"{project.name}.kicad_pro")],
                capture_output=True, text=True, timeout=600)
    finally:
        # KiCad leaves its per-run work folders (named by UUID) in the root's /tmp
        for p in (root / "tmp").iterdir():
            if p.name not in work_dirs and UUID.match(p.name) and p.is_dir():
                shutil.rmtree(p, ignore_errors=True)


def _project(tmp_path: Path, sample: str) -> Path:
    proj = tmp_path / sample
    shutil.copytree(REPO / "sample_projects" / sample, proj)
    shutil.copy(JOBSET, proj / "frontcheck.kicad_jobset")
    return proj


def test_sample_jobset_is_what_the_docs_show():
    jobset = json.loads(JOBSET.read_text())
    step = next(j for j in jobset["jobs"] if j["type"] == "special_execute")
    assert step["settings"]["command"] == \
        'python3 -m frontcheck.kicad_jobset "${KIPRJMOD}" --findings-exit 5'
    assert step["settings"]["record_output"] is True
    assert step["settings"]["ignore_exit_code"] is False
    doc = (REPO / "docs" / "kicad-integration.md").read_text()
    assert JOBSET.read_text().strip() in doc


def test_findings_fail_the_job_and_keep_the_report(root_venv, tmp_path):
    root, venv, major = root_venv
    proj = _project(tmp_path, "shunt-monitor")
    before = {p.name: p.read_bytes() for p in proj.iterdir()}
    res = _run_jobset(root, venv, proj)
    out = res.stdout + res.stderr
    # the ERC job succeeds, frontcheck's step exits 5: KiCad calls it failed, kicad-cli fails
    assert "Found 0 violations" in out and "1 jobs succeeded, 1 job failed" in out, out
    assert res.returncode != 0
    review = proj / "review"
    step_id = next(j["id"] for j in json.loads(JOBSET.read_text())["jobs"]
                   if j["type"] == "special_execute")
    log = (review / f"{step_id}.log").read_text()       # kept although the job failed
    assert (review / "shunt-monitor-erc.rpt").is_file()
    assert log.startswith("shunt-monitor: 1 stage(s) found: U1A difference amplifier\n")
    assert "FAIL at fail level 'error'" in log and "ERROR ratio-mismatch" in log
    if major == 9:      # KiCad 9.0 gives no work path: the report is beside the project
        report = proj / "shunt-monitor-frontcheck.html"
        assert f"Full report: {report}" in log
    else:               # KiCad 10 does: the report is in the jobset's output
        report = review / "shunt-monitor-frontcheck.html"
        assert "Full report: shunt-monitor-frontcheck.html in the jobset's output" in log
        assert not (proj / "shunt-monitor-frontcheck.html").exists()
    page = report.read_text()
    assert "ratio-mismatch" in page and "<svg" in page
    # the design files are untouched
    assert {p.name: p.read_bytes() for p in proj.iterdir() if p.name in before} == before


def test_clean_design_passes_the_jobset(root_venv, tmp_path):
    root, venv, major = root_venv
    proj = _project(tmp_path, "bench-scale")
    res = _run_jobset(root, venv, proj)
    out = res.stdout + res.stderr
    assert res.returncode == 0 and "2 jobs succeeded, 0 job failed" in out, out
    logs = list((proj / "review").glob("*.log"))
    assert len(logs) == 1 and "PASS at fail level 'error'" in logs[0].read_text()
    assert (proj / ("" if major == 9 else "review") / "bench-scale-frontcheck.html").is_file()


# -- the step's command on its own (no KiCad) ------------------------------------------------

def test_report_goes_to_kicads_work_path_when_set(tmp_path, capsys, monkeypatch):
    from frontcheck.kicad_jobset import main
    proj = tmp_path / "bench-scale"
    shutil.copytree(REPO / "sample_projects" / "bench-scale", proj)
    work = tmp_path / "work"
    work.mkdir()
    monkeypatch.setenv("JOBSET_OUTPUT_WORK_PATH", str(work))     # as KiCad 10 sets it
    assert main([str(proj), "--samples", "100", "--findings-exit", "5"]) == 0
    assert (work / "bench-scale-frontcheck.html").is_file()
    assert not (proj / "bench-scale-frontcheck.html").exists()
    # the work folder is KiCad's temporary one: the summary names the report as it will be
    assert capsys.readouterr().out.splitlines()[-1] == \
        "Full report: bench-scale-frontcheck.html in the jobset's output"


def test_empty_kiprjmod_uses_the_project_folder_it_runs_in(tmp_path, capsys, monkeypatch):
    # kicad-cli 9.0 leaves ${KIPRJMOD} empty when given the project by a relative path
    from frontcheck.kicad_jobset import main
    proj = tmp_path / "bench-scale"
    shutil.copytree(REPO / "sample_projects" / "bench-scale", proj)
    monkeypatch.chdir(proj)
    monkeypatch.delenv("JOBSET_OUTPUT_WORK_PATH", raising=False)
    assert main(["", "--samples", "100"]) == 0
    assert (proj / "bench-scale-frontcheck.html").is_file()
    monkeypatch.chdir(tmp_path)
    assert main(["", "--samples", "100"]) == 2
    err = capsys.readouterr().err
    assert "empty project folder" in err and "absolute path" in err
