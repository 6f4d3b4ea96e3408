"""Opening design files: only regular files, only inside the folders a design may use.

Every reader goes through :func:`read_bytes`. It opens without blocking and checks what it
opened, so a named pipe, a device or a folder is refused with its real name instead of
hanging or failing obscurely, and a link that leads nowhere says so.
"""

from __future__ import annotations

import os
import stat
from pathlib import Path

from frontcheck.errors import InputError

__all__ = ["read_bytes", "inside", "SYSTEM_FOLDERS"]

# Kernel and device trees: their "files" are process state, not designs.
SYSTEM_FOLDERS = (Path("/proc"), Path("/sys"), Path("/dev"))

_KINDS = ((stat.S_ISDIR, "a folder"), (stat.S_ISFIFO, "a named pipe (FIFO)"),
          (stat.S_ISCHR, "a character device"), (stat.S_ISBLK, "a block device"),
          (stat.S_ISSOCK, "a socket"))


def _not_regular(mode: int) -> str | None:
    for test, name in _KINDS:
        if test(mode):
            return name
    return None if stat.S_ISREG(mode) else "not a regular file"


def _missing(p: Path) -> InputError:
    if p.is_symlink():
        return InputError(f"is a symbolic link to {os.readlink(p)}, which does not exist",
                          str(p), hint="restore the file the link points to, or fix the link")
    return InputError("file not found", str(p))


def read_bytes(path: str | Path) -> bytes:
    """The content of a regular file. Raises InputError naming the real cause otherwise."""
    p = Path(path)
    real = p.resolve()
    if any(real.is_relative_to(s) for s in SYSTEM_FOLDERS):
        raise InputError(f"is a system file ({real}), not a design file", str(p),
                         hint="pass a KiCad design file")
    try:
        fd = os.open(p, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except FileNotFoundError:
        raise _missing(p) from None
    except IsADirectoryError:
        raise InputError("is a folder, not a file", str(p)) from None
    except PermissionError:
        raise InputError("cannot read: permission denied", str(p),
                         hint="check the file's permissions") from None
    except OSError as e:
        raise InputError(f"cannot read: {e.strerror}", str(p)) from None
    with os.fdopen(fd, "rb") as f:
        kind = _not_regular(os.fstat(f.fileno()).st_mode)
        if kind:
            raise InputError(f"is {kind}, not a file", str(p),
                             hint="design files are ordinary files")
        try:
            return f.read()
        except OSError as e:
            raise InputError(f"cannot read: {e.strerror}", str(p)) from None


def inside(path: Path, folders) -> bool:
    """Is ``path``, with every link followed, inside one of ``folders``?"""
    real = path.resolve()
    return any(real.is_relative_to(Path(d).resolve()) for d in folders)
