"""The command asks numpy's BLAS library for one thread (frontcheck.cli.single_threaded_blas):
its matrices are small, so BLAS worker threads only spin. A number the user set is kept.

Run in fresh interpreters: the thread count of a process is fixed when numpy first loads.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from frontcheck.cli import BLAS_THREAD_VARIABLES, single_threaded_blas

REPO = Path(__file__).resolve().parents[2]
SAMPLE = REPO / "sample_projects" / "bench-scale"

# Runs a whole check through the command's entry point, then reports the BLAS variables it
# saw and the threads the process holds (Linux: one directory per thread in /proc/self/task).
_CHILD = """if True:
    import os, sys
    from frontcheck.cli import entry
    sys.argv = ["frontcheck", "check", sys.argv[1], "--format", "json"]
    try:
        entry()
    except SystemExit as e:
        code = e.code
    tasks = len(os.listdir("/proc/self/task")) if os.path.isdir("/proc/self/task") else -1
    print(code, os.environ["OPENBLAS_NUM_THREADS"], tasks, file=sys.stderr)
"""


def _child(env_extra: dict[str, str]) -> tuple[str, str, int]:
    env = {k: v for k, v in os.environ.items() if k not in BLAS_THREAD_VARIABLES}
    env.update(env_extra)
    out = subprocess.run([sys.executable, "-c", _CHILD, str(SAMPLE)], capture_output=True,
                         text=True, cwd=REPO, env=env, timeout=300)
    code, blas, tasks = out.stderr.strip().splitlines()[-1].split()
    return code, blas, int(tasks)


def test_a_check_runs_numpy_on_one_thread():
    code, blas, tasks = _child({})
    assert code in ("0", "1")                  # the check ran (1: findings at the fail level)
    assert blas == "1"
    if tasks != -1:
        # OpenBLAS on a machine of N cores starts N - 1 workers beside the main thread
        assert tasks == 1


def test_a_thread_count_the_user_set_is_kept():
    code, blas, _ = _child({"OPENBLAS_NUM_THREADS": "2"})
    assert code in ("0", "1")
    assert blas == "2"


@pytest.mark.parametrize("given", [{}, {"MKL_NUM_THREADS": "4"}])
def test_single_threaded_blas_fills_in_only_what_is_unset(given):
    environ = dict(given)
    single_threaded_blas(environ)
    assert set(environ) == set(BLAS_THREAD_VARIABLES)
    for name in BLAS_THREAD_VARIABLES:
        assert environ[name] == given.get(name, "1")
