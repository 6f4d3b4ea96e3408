"""KiCad 9 (and 10 where present) run inside the Debian root that shared/tools/kicad9 builds, with host folders
bind-mounted at their own paths, so that the paths KiCad writes (an XML netlist's source, a
jobset's ${KIPRJMOD}) are the host's paths: what KiCad on the user's machine would write.

Needs root (chroot, mount). Tests skip with a reason where that or the root is missing (a
user's clone), and fail in CI (FRONTCHECK_REQUIRE_ORACLES=1).
"""

from __future__ import annotations

import contextlib
import os
import subprocess
from pathlib import Path

import pytest

from conftest import SHARED, need

KICAD9_ROOT = Path(os.environ.get("FRONTCHECK_KICAD9_ROOT", "/opt/kicad9-root"))
KICAD10_ROOT = Path(os.environ.get("FRONTCHECK_KICAD10_ROOT", "/opt/kicad10-root"))


def kicad9_root() -> Path:
    """The Debian root with KiCad 9's kicad-cli, built by the kicad9 tool when missing."""
    need(hasattr(os, "geteuid") and os.geteuid() == 0,
         "running KiCad 9 in its Debian root needs root (chroot, mount)")
    tool = SHARED / "tools" / "kicad9"
    cli = KICAD9_ROOT / "usr" / "bin" / "kicad-cli"
    if not cli.exists() and tool.exists():
        # the tool builds the root on first use (about a minute)
        subprocess.run([str(tool), "version"], capture_output=True, text=True, timeout=900)
    need(cli.exists(), f"no KiCad 9 Debian root at {KICAD9_ROOT} (built by shared/tools/kicad9)")
    return KICAD9_ROOT


def kicad_root(major: int) -> Path:
    """KiCad 9's root (required in CI), or KiCad 10's where this machine has it: the second
    release is checked where it costs nothing, never built for a test."""
    if major == 9:
        return kicad9_root()
    root = KICAD10_ROOT
    if not (hasattr(os, "geteuid") and os.geteuid() == 0 and
            (root / "usr" / "bin" / "kicad-cli").exists()):
        pytest.skip(f"no KiCad {major} Debian root at {root} (optional: KiCad 9 is the oracle)")
    return root


@contextlib.contextmanager
def mounted(root: Path, *folders: Path):
    """Bind-mount host folders into the root at their own absolute paths."""
    done: list[Path] = []
    made: list[Path] = []         # folders created in the root, removed again (deepest first)
    try:
        for folder in sorted(f.resolve() for f in folders):
            target = root / str(folder).lstrip("/")
            missing = [d for d in (target, *target.parents) if not d.exists()]
            target.mkdir(parents=True, exist_ok=True)
            made.extend(missing)
            subprocess.run(["mount", "--bind", str(folder), str(target)], check=True)
            done.append(target)
        yield
    finally:
        for target in reversed(done):
            subprocess.run(["umount", str(target)], check=False)
        for d in sorted(made, key=lambda d: len(d.parts), reverse=True):
            with contextlib.suppress(OSError):
                d.rmdir()        # only ever an empty folder: never anything mounted


def run_in_root(root: Path, argv: list[str], *folders: Path, timeout: int = 600,
                env: dict | None = None) -> subprocess.CompletedProcess:
    """Run a command inside the root with the given host folders mounted."""
    with mounted(root, *folders):
        return subprocess.run(["chroot", str(root), *argv], capture_output=True, text=True,
                              timeout=timeout, env=env)


def export_xml(root: Path, schematic: Path, xml: Path) -> None:
    """KiCad 9's own intermediate XML netlist of a schematic, as its generator dialogs write it
    (kicad-cli sch export netlist --format kicadxml)."""
    folders = {schematic.parent.resolve(), xml.parent.resolve()}
    res = run_in_root(root, ["kicad-cli", "sch", "export", "netlist", "--format", "kicadxml",
                             "-o", str(xml.resolve()), str(schematic.resolve())], *folders)
    assert res.returncode == 0 and xml.is_file(), res.stdout + res.stderr
