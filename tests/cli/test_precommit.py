"""pre-commit: changed files map to their projects, and the hook works under the pre-commit
framework itself (``pre-commit try-repo``) in a temporary git repository."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from conftest import REPO, need
from frontcheck.cli import main
from frontcheck.precommit import projects_for
from test_pipeline import write_diff_project


def test_sub_sheet_maps_to_its_project_once(tmp_path, monkeypatch):
    pro = write_diff_project(tmp_path / "h", name="bridge", sub_sheet=True)
    monkeypatch.chdir(tmp_path)
    files = ["h/amp_stage.kicad_sch", "h/bridge.kicad_sch", "h/bridge.kicad_pro"]
    got = projects_for(files)
    assert [Path(p).resolve() for p in got] == [pro.resolve()]


def test_files_of_two_projects_and_strays(tmp_path, monkeypatch):
    a = write_diff_project(tmp_path / "a", name="alpha", sub_sheet=True)
    b = write_diff_project(tmp_path / "b", name="beta")
    lone = tmp_path / "c" / "lone.kicad_sch"
    lone.parent.mkdir()
    shutil.copy(b.with_suffix(".kicad_sch"), lone)
    monkeypatch.chdir(tmp_path)
    got = projects_for(["b/beta.kicad_sch", "a/amp_stage.kicad_sch",
                        "c/lone.kicad_sch", "b/beta.kicad_pro"])
    assert [Path(p).resolve() for p in got] == [b.resolve(), a.resolve(), lone.resolve()]


def test_sheet_in_a_subfolder_finds_the_project_above(tmp_path, monkeypatch):
    pro = write_diff_project(tmp_path / "p", name="top", sub_sheet=True)
    # move the sub-sheet into a folder and point the root sheet at it
    sub = pro.parent / "sheets"
    sub.mkdir()
    (pro.parent / "amp_stage.kicad_sch").rename(sub / "amp_stage.kicad_sch")
    root = pro.with_suffix(".kicad_sch")
    root.write_text(root.read_text().replace('"amp_stage.kicad_sch"', '"sheets/amp_stage.kicad_sch"'))
    monkeypatch.chdir(tmp_path)
    assert [Path(p).resolve() for p in projects_for(["p/sheets/amp_stage.kicad_sch"])] == \
        [pro.resolve()]


def test_pre_commit_flag_checks_the_projects(tmp_path, monkeypatch, capsys):
    write_diff_project(tmp_path / "bad", name="bad", r4="11k", sub_sheet=True)
    monkeypatch.chdir(tmp_path)
    assert main(["check", "--pre-commit", "--samples", "100", "bad/amp_stage.kicad_sch"]) == 1
    out = capsys.readouterr().out
    assert "ratio-mismatch" in out
    # pre-commit passes only existing files that match the hook's pattern: anything else is
    # a misconfigured hook or a typo, and must not pass in silence
    (tmp_path / "README.md").write_text("a board\n")
    for bad, why in (("README.md", "not a KiCad schematic"), ("nope.kicad_sch", "not found"),
                     ("bad", "not a KiCad schematic")):
        assert main(["check", "--pre-commit", bad]) == 2
        err = capsys.readouterr().err
        assert bad in err and why in err and "Traceback" not in err


# -- the pre-commit framework ----------------------------------------------------------------

def _git(cwd: Path, *args: str) -> None:
    subprocess.run(["git", *args], cwd=cwd, check=True, capture_output=True,
                   env={**os.environ, "GIT_AUTHOR_NAME": "t", "GIT_AUTHOR_EMAIL": "t@example.org",
                        "GIT_COMMITTER_NAME": "t", "GIT_COMMITTER_EMAIL": "t@example.org"})


def _try_repo(hook_repo: Path, ref: str, design_repo: Path) -> subprocess.CompletedProcess:
    exe = shutil.which("pre-commit")
    cmd = [exe] if exe else [sys.executable, "-m", "pre_commit"]
    return subprocess.run(cmd + ["try-repo", str(hook_repo), "frontcheck", "--ref", ref,
                                 "--all-files", "--verbose"],
                          cwd=design_repo, capture_output=True, text=True, timeout=900)


def _has_pre_commit() -> bool:
    if shutil.which("pre-commit"):
        return True
    try:
        import pre_commit  # noqa: F401
    except ImportError:
        return False
    return True


@pytest.fixture(scope="module")
def hook_repo(tmp_path_factory):
    """A snapshot of this checkout's working tree (tracked and untracked, not ignored files)
    as a one-commit git repository, so that try-repo installs the hook from the files as they
    are now; try-repo on a dirty checkout would take only the tracked files' changes.

    try-repo builds the hook's environment in a temporary store on every call (a pip install
    of frontcheck and its dependencies), which makes each case take a minute or more."""
    need(_has_pre_commit(), "the pre-commit framework is not installed (pip install pre-commit)")
    need(shutil.which("git") is not None, "git not installed")
    need((REPO / ".git").exists(), "frontcheck is not a git checkout (try-repo needs one)")
    snap = tmp_path_factory.mktemp("hook-repo")
    listed = subprocess.run(["git", "ls-files", "-co", "--exclude-standard", "-z"], cwd=REPO,
                            capture_output=True, check=True).stdout.decode().split("\0")
    for rel in filter(None, listed):
        src = REPO / rel
        if src.is_file():
            dst = snap / rel
            dst.parent.mkdir(parents=True, exist_ok=True)
            shutil.copy2(src, dst)
    _git(snap, "init", "-q")
    _git(snap, "add", "-A")
    _git(snap, "commit", "-q", "-m", "snapshot")
    sha = subprocess.run(["git", "rev-parse", "HEAD"], cwd=snap, capture_output=True, text=True,
                         check=True).stdout.strip()
    return snap, sha


SAMPLES = REPO / "sample_projects"


@pytest.mark.parametrize("sample,flawed", [("strain-logger", True), ("bench-scale", False)],
                         ids=["flawed-fails", "clean-passes"])
def test_hook_under_pre_commit(hook_repo, tmp_path, sample, flawed):
    # strain-logger (one channel sheet used four times, RG misses the gain target in every
    # channel: its README's expected findings) must fail; bench-scale (the clean reference
    # sample) must pass.
    need((SAMPLES / sample).is_dir(), f"sample project {sample} not found")
    repo, sha = hook_repo
    design = tmp_path / "design"
    design.mkdir()
    _git(design, "init", "-q")
    shutil.copytree(SAMPLES / sample, design / "hardware" / sample)
    (design / "README.md").write_text("a board\n")
    _git(design, "add", "-A")
    res = _try_repo(repo, sha, design)
    log = res.stdout + res.stderr
    if flawed:
        assert res.returncode == 1, log
        assert "Failed" in log
        # channel.kicad_sch, the root sheet and the project file map to one project, checked
        # once with its whole hierarchy: one gain-error per channel instance, four in all
        assert log.count("gain-error") == 4, log
    else:
        assert res.returncode == 0, log
        assert "Passed" in log and "ERROR" not in log
