"""The CI and pre-commit examples of docs/kicad-integration.md, run here as far as a test can:
the shell steps of the GitHub Actions workflow and the GitLab CI job run in a temporary git
repository holding sample projects under hardware/ (the install step is left out: frontcheck
is installed here), with the runners' control flow (continue-on-error, `if:` on the check's
outcome, one shell session per GitLab job) followed by hand.

Check values: SARIF 2.1.0 validates against the published schema (shared corpus); the GitLab
code quality report's fields and severities are those GitLab documents for its Code Climate
subset (description, check_name, fingerprint, severity, location.path, location.lines.begin;
severities info/minor/major/critical/blocker; from memory).
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from conftest import REPO, REQUIRED, need

if REQUIRED:                 # PyYAML comes with pre-commit (test extra); required in CI
    import yaml
else:
    yaml = pytest.importorskip("yaml")

EXAMPLES = REPO / "docs" / "examples"
DOC = REPO / "docs" / "kicad-integration.md"
CODE_QUALITY_SEVERITIES = {"info", "minor", "major", "critical", "blocker"}


def _design_repo(tmp_path: Path, *samples: str) -> Path:
    repo = tmp_path / "designs"
    for s in samples:
        shutil.copytree(REPO / "sample_projects" / s, repo / "hardware" / s)
    subprocess.run(["git", "init", "-q", str(repo)], check=True)
    return repo


def _env() -> dict:
    env = dict(os.environ)
    env["PATH"] = f"{Path(sys.executable).parent}{os.pathsep}{env.get('PATH', '')}"
    return env


def _bash(script: str, cwd: Path, env: dict) -> subprocess.CompletedProcess:
    return subprocess.run(["bash", "-e", "-c", script], cwd=cwd, env=env, capture_output=True,
                          text=True, timeout=600)


def test_examples_are_in_the_docs():
    doc = DOC.read_text()
    for name in ("github-actions.yml", "gitlab-ci.yml", "pre-commit-config.yaml"):
        assert (EXAMPLES / name).read_text().strip() in doc, name


def test_pre_commit_example_names_the_hook_this_repository_provides():
    example = yaml.safe_load((EXAMPLES / "pre-commit-config.yaml").read_text())
    provided = {h["id"]: h for h in yaml.safe_load((REPO / ".pre-commit-hooks.yaml").read_text())}
    [repo] = example["repos"]
    assert [h["id"] for h in repo["hooks"]] == ["frontcheck"]
    assert set(provided) >= {"frontcheck"}
    # tests/test_precommit.py runs this hook under the pre-commit framework itself


def _github_steps():
    wf = yaml.safe_load((EXAMPLES / "github-actions.yml").read_text())
    assert wf["permissions"]["security-events"] == "write"
    [job] = wf["jobs"].values()
    return job["steps"]


@pytest.mark.parametrize("samples, fails", [(("shunt-monitor", "bench-scale"), True),
                                             (("bench-scale",), False)])
def test_github_workflow_uploads_sarif_and_fails_on_findings(tmp_path, samples, fails):
    import jsonschema
    schema_file = REPO.parent / "shared" / "schemas" / "sarif-schema-2.1.0.json"
    repo = _design_repo(tmp_path, *samples)
    env = _env()
    steps = _github_steps()
    check = next(s for s in steps if s.get("id") == "check")
    upload = next(s for s in steps if "upload-sarif" in s.get("uses", ""))
    final = steps[-1]
    assert check["continue-on-error"] is True and upload["if"] == "always()"
    assert final["if"] == "steps.check.outcome == 'failure'"

    res = _bash(check["run"], repo, env)
    outcome = "failure" if res.returncode else "success"
    assert outcome == ("failure" if fails else "success"), res.stderr
    sarif = json.loads((repo / upload["with"]["sarif_file"]).read_text())
    need(schema_file.is_file(), f"SARIF schema not found at {schema_file}")
    jsonschema.validate(sarif, json.loads(schema_file.read_text()))
    results = sarif["runs"][0]["results"]
    uris = {r["locations"][0]["physicalLocation"]["artifactLocation"]["uri"] for r in results
            if r.get("locations")}
    # paths relative to the repository root, as code scanning needs them
    assert all((repo / u).is_file() for u in uris)
    assert any(r["level"] == "error" for r in results) == fails
    if outcome == "failure":
        res = _bash(final["run"], repo, env)
        assert res.returncode == 1 and "ratio-mismatch" in res.stdout


@pytest.mark.parametrize("samples, status", [(("shunt-monitor",), 1), (("bench-scale",), 0)])
def test_gitlab_job_writes_code_quality_and_keeps_the_status(tmp_path, samples, status):
    job = yaml.safe_load((EXAMPLES / "gitlab-ci.yml").read_text())["frontcheck"]
    assert job["artifacts"]["when"] == "always"
    report_name = job["artifacts"]["reports"]["codequality"]
    repo = _design_repo(tmp_path, *samples)
    env = _env()
    env.update(job["variables"])
    script = "\n".join(line for line in job["script"] if not line.startswith("pip install"))
    res = subprocess.run(["bash", "-c", script], cwd=repo, env=env, capture_output=True,
                         text=True, timeout=600)
    assert res.returncode == status, res.stderr
    issues = json.loads((repo / report_name).read_text())
    assert isinstance(issues, list)
    # errors become 'major'; a clean design may still carry information findings
    assert ("major" in {i["severity"] for i in issues}) == bool(status)
    for i in issues:
        assert i["description"] and i["check_name"] and i["fingerprint"]
        assert i["severity"] in CODE_QUALITY_SEVERITIES
        assert (repo / i["location"]["path"]).is_file()
        assert isinstance(i["location"]["lines"]["begin"], int)
    assert len({i["fingerprint"] for i in issues}) == len(issues)
    if status:
        assert {"ratio-mismatch", "headroom"} <= {i["check_name"] for i in issues}
