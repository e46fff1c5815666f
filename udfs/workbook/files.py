"""Writing a file safely: the one way the commands replace a workbook, keep a backup or write a copy or report.

The new content goes to a temporary file beside the target, named with the writing
process's id (``.~degreewise-PID-…``), is flushed to disk, gets the target's owner,
group, mode and extended attributes (ACLs, labels) where the system allows (a new
file: the mode a new file normally gets), and is moved into place atomically, its
folder flushed too. A workbook is replaced only if it is still the file that was
read (size, modification time, inode and SHA-256), so an edit saved meanwhile by
another program is never lost. Leftovers of runs that died (the process named in
the file name is gone) are swept the next time a command writes into that folder.
"""

from __future__ import annotations

import errno
import hashlib
import os
import re
import shutil
import signal
import stat
import sys
import tempfile
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from ..xlsx.package import PackageError

PREFIX = ".~degreewise-"
LEFTOVER = re.compile(r"^(?:\.~)?degreewise-(\d+)-")  # temporary files beside workbooks, spool folders


class Changed(Exception):
    """The target changed on disk since it was read."""

    def __str__(self) -> str:
        return ("the workbook was changed by another program while it was refreshed; it was left as that "
                "program saved it: refresh it again")


@dataclass(frozen=True)
class Seen:
    """What a file was when it was read."""

    size: int
    mtime_ns: int
    inode: int
    sha256: str


def read(path: Path) -> tuple[bytes, Seen]:
    """The file's bytes and what it was when read; a device, a pipe or a folder is refused unopened."""
    if not stat.S_ISREG(os.stat(path).st_mode):
        raise PackageError(f"{path} is not a regular file (a device, a pipe or a folder); give a workbook file")
    with open(path, "rb") as f:
        info = os.fstat(f.fileno())
        data = f.read()
    return data, Seen(info.st_size, info.st_mtime_ns, info.st_ino, hashlib.sha256(data).hexdigest())


def unchanged(path: Path, seen: Seen) -> bool:
    """Whether ``path`` is still the file ``seen`` describes."""
    info = os.stat(path)
    if (info.st_size, info.st_mtime_ns, info.st_ino) != (seen.size, seen.mtime_ns, seen.inode):
        return False
    return read(path)[1] == seen


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # another user's process
        return True
    return True


_SWEPT: set = set()  # folders this process has swept: a run that dies leaves its leftovers before, not during


def sweep(folder: Path) -> list[Path]:
    """Remove the temporary files (and spool folders) that runs which died left in ``folder``; their paths.
    Once per folder and process, so a folder run does not list its folder again for every workbook."""
    gone = []
    key = os.path.abspath(folder)
    if key in _SWEPT:
        return gone
    _SWEPT.add(key)
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return gone
    for entry in entries:
        m = LEFTOVER.match(entry.name)
        if m and int(m.group(1)) != os.getpid() and not _alive(int(m.group(1))):
            try:
                shutil.rmtree(entry.path) if entry.is_dir(follow_symlinks=False) else os.unlink(entry.path)
                gone.append(Path(entry.path))
            except OSError:
                pass
    return gone


def _same_attributes(like: Path, tmp: str) -> None:
    """Owner, group, mode and extended attributes of ``like`` on ``tmp``, each where the system allows."""
    info = os.stat(like)
    os.chmod(tmp, stat.S_IMODE(info.st_mode))
    for uid in (info.st_uid, -1):  # the owner needs privilege; the group, membership
        try:
            os.chown(tmp, uid, info.st_gid)
            break
        except (OSError, AttributeError):
            continue
    if hasattr(os, "listxattr"):
        try:
            names = os.listxattr(like)
        except OSError:
            names = []
        for name in names:
            try:
                os.setxattr(tmp, name, os.getxattr(like, name))
            except OSError:  # a label or ACL this user or file system may not set
                pass


def _fsync_folder(folder: Path) -> None:
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


def write(target: Path, fill: Callable[[str], None], like: Path | None = None, seen: Seen | None = None) -> None:
    """Write ``target`` through ``fill(temporary path)``; with the attributes of ``like`` (else those of a new
    file) and, with ``seen``, only if the target is still that file (else `Changed`)."""
    folder = target.parent
    if not folder.is_dir():
        raise FileNotFoundError(errno.ENOENT, "the folder does not exist", str(folder))
    sweep(folder)
    fd, tmp = tempfile.mkstemp(prefix=f"{PREFIX}{os.getpid()}-", suffix=target.suffix, dir=folder)
    os.close(fd)
    try:
        fill(tmp)
        with open(tmp, "rb+") as f:
            os.fsync(f.fileno())
        if like is not None:
            _same_attributes(like, tmp)
        else:
            mask = os.umask(0)
            os.umask(mask)
            os.chmod(tmp, 0o666 & ~mask)
        if seen is not None and not unchanged(target, seen):
            raise Changed
        os.replace(tmp, target)
        _fsync_folder(folder)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)


def copy(source: Path, target: Path) -> None:
    """``source`` copied to ``target`` the same safe way (a backup: never a truncated file under its name)."""
    write(target, lambda tmp: shutil.copyfile(source, tmp), like=source)


def in_words(err: OSError, path: Path) -> str:
    """An operating-system error while writing next to ``path``, in one line naming the user's folder."""
    folder = path.parent
    if err.errno == errno.ENOSPC:
        return f"the disk holding {folder} is full; nothing was changed"
    if err.errno == errno.EROFS:
        return f"{folder} is on a read-only file system; nothing was changed"
    if err.errno in (errno.EACCES, errno.EPERM):
        return f"no permission to write in {folder}; nothing was changed"
    if err.errno == errno.ENOENT and err.filename == str(folder):
        return f"the folder {folder} does not exist"
    return f"{err.strerror or err} ({err.filename or path}); nothing was changed"


def die_with_parent() -> None:
    """In a worker process: end when the process that started it ends (Linux prctl PR_SET_PDEATHSIG), so that
    no worker is left blocked writing to a pipe nobody reads."""
    if sys.platform.startswith("linux"):
        import ctypes

        ctypes.CDLL(None, use_errno=True).prctl(1, signal.SIGKILL)  # PR_SET_PDEATHSIG = 1
