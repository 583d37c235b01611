"""Atomic file writes: the one way samplewright puts a file under its final name.

:func:`atomic_write` has a writer fill a temporary file in the target's own folder, fsyncs it,
gives it the permissions the umask asks for and renames it over the final name (then fsyncs the
folder). A reader therefore sees the old file or the new one, never a part of one, and a writer
killed at any moment leaves at most a temporary file behind.

Temporary files are named ``.swtmp.<host>.<pid>.<token>.<name>``: ``host`` is a short tag of the
machine (host name, boot and process namespace), ``pid`` the writer's process id. Every write
first removes the stale temporary files of its folder (:func:`clean_stale_temps`): those of a
writer on this machine whose process is gone, and those of any machine that nobody has touched
for :data:`STALE_AFTER_S` seconds (a process id on another node of a cluster cannot be checked,
so only age tells there). A live writer's file is never removed.

Files are created with mode ``0o666`` less the umask, as ``open()`` does, so a store shared with
colleagues (umask 002 or 022) is readable by them.

:func:`target_problem` and :func:`same_file` let the command line refuse an output path before
anything is written: a folder, a path under a file, a name too long for the file system, or a
path that is (or resolves to) one of the inputs.
"""

from __future__ import annotations

import errno
import hashlib
import os
import re
import secrets
import socket
import stat
import time
from collections.abc import Callable
from pathlib import Path

__all__ = [
    "STALE_AFTER_S",
    "TEMP_PREFIX",
    "atomic_write",
    "clean_stale_temps",
    "is_temp_name",
    "same_file",
    "target_problem",
    "write_bytes",
    "write_text",
]

TEMP_PREFIX = ".swtmp."
STALE_AFTER_S = 24 * 3600
_TEMP_RE = re.compile(r"^\.swtmp\.([0-9a-f]{8})\.(\d+)\.[0-9a-f]{8}\.")
_NAME_CHARS = 40  # how much of the final name a temporary name repeats (for people, not code)
_HOST_TAG: str | None = None


def _host_tag() -> str:
    """8 hex digits naming this machine's process space (host, boot, pid namespace)."""
    global _HOST_TAG
    if _HOST_TAG is None:
        parts = [socket.gethostname()]
        try:
            parts.append(Path("/proc/sys/kernel/random/boot_id").read_text().strip())
        except OSError:
            pass
        try:
            parts.append(str(os.stat("/proc/self/ns/pid").st_ino))
        except OSError:
            pass
        _HOST_TAG = hashlib.sha256("\0".join(parts).encode()).hexdigest()[:8]
    return _HOST_TAG


def is_temp_name(name: str) -> bool:
    """Whether ``name`` is one of samplewright's temporary file names.

    >>> is_temp_name(".swtmp.0a1b2c3d.4242.deadbeef.a.parquet"), is_temp_name("a.parquet")
    (True, False)
    """
    return _TEMP_RE.match(name) is not None


def _temp_name(final: str) -> str:
    return f"{TEMP_PREFIX}{_host_tag()}.{os.getpid()}.{secrets.token_hex(4)}.{final[:_NAME_CHARS]}"


def _pid_alive(pid: int) -> bool:
    """Whether process ``pid`` of this machine still runs (a zombie counts as gone)."""
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # e.g. another user's process: it exists
        return True
    try:
        fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
    except (OSError, IndexError):
        return True
    return fields[0] != "Z"


def clean_stale_temps(folder: str | Path, *, max_age_s: float = STALE_AFTER_S) -> list[Path]:
    """Remove the temporary files in ``folder`` that no live writer will finish; return them.

    A temporary file is stale when its writer ran on this machine and is gone, or when it has
    not been modified for ``max_age_s`` seconds. Errors (a file removed meanwhile, a folder
    that cannot be listed) are ignored: cleaning never stops a write.
    """
    removed: list[Path] = []
    now = time.time()
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return removed
    for entry in entries:
        match = _TEMP_RE.match(entry.name)
        if match is None:
            continue
        try:
            st = entry.stat(follow_symlinks=False)
            if not stat.S_ISREG(st.st_mode):
                continue
            dead = match.group(1) == _host_tag() and not _pid_alive(int(match.group(2)))
            if dead or now - st.st_mtime > max_age_s:
                os.unlink(entry.path)
                removed.append(Path(entry.path))
        except OSError:
            continue
    return removed


def _umask() -> int:
    try:
        for line in Path("/proc/self/status").read_text().splitlines():
            if line.startswith("Umask:"):
                return int(line.split()[1], 8)
    except (OSError, ValueError):
        pass
    mask = os.umask(0o022)  # no /proc: read it the portable way (and put it back)
    os.umask(mask)
    return mask


def _fsync_folder(folder: Path) -> None:
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:  # pragma: no cover - some file systems refuse opening folders
        return
    try:
        os.fsync(fd)
    except OSError:  # pragma: no cover
        pass
    finally:
        os.close(fd)


def atomic_write(path: str | Path, writer: Callable[[str], object]) -> None:
    """Call ``writer(temporary_path)``, then make that file ``path`` in one step.

    The folder is created if needed; stale temporary files in it are removed first. If the
    writer (or anything after it) fails, the temporary file is removed, an existing file at
    ``path`` is left as it was, and the error is raised again with ``path`` as its file name
    when it had none (so "No space left on device" says where).
    """
    path = Path(path)
    folder = path.parent
    folder.mkdir(parents=True, exist_ok=True)
    clean_stale_temps(folder)
    tmp = folder / _temp_name(path.name)
    try:
        os.close(os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL | os.O_CLOEXEC, 0o600))
        writer(str(tmp))
        os.chmod(tmp, 0o666 & ~_umask())
        fd = os.open(tmp, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)
        os.replace(tmp, path)
    except BaseException as exc:
        tmp.unlink(missing_ok=True)
        if isinstance(exc, OSError) and exc.filename is None:
            exc.filename = str(path)
        raise
    _fsync_folder(folder)


def write_bytes(path: str | Path, data: bytes) -> None:
    """Write ``data`` to ``path`` atomically."""
    atomic_write(path, lambda tmp: Path(tmp).write_bytes(data))


def write_text(path: str | Path, text: str) -> None:
    """Write ``text`` (UTF-8) to ``path`` atomically."""
    write_bytes(path, text.encode("utf-8"))


def _limit(folder: Path, name: str, default: int) -> int:
    try:
        return int(os.pathconf(folder, name))
    except (OSError, ValueError):
        return default


def _exists(path: Path) -> bool:
    try:
        os.stat(path)
    except (OSError, ValueError):
        return False
    return True


def target_problem(path: str | Path) -> str | None:
    """What stops a file being written at ``path``, in a few words, or None if nothing does.

    Checks, without writing anything: the path names a file (not a folder), no folder on the
    way is a file, each name fits the file system's limit, the whole path fits its limit, and
    the nearest existing folder is writable.

    >>> target_problem("/")
    'is a folder'
    """
    p = Path(path)
    if p.name in ("", ".", ".."):
        return "is a folder" if p.is_dir() else "does not name a file"
    absolute = Path(os.path.abspath(p))
    existing = absolute.parent
    while not _exists(existing) and existing != existing.parent:
        existing = existing.parent
    if not existing.is_dir():
        return f"is under {existing}, which is a file, not a folder"
    name_max = _limit(existing, "PC_NAME_MAX", 255)
    for part in absolute.parts[1:]:
        size = len(os.fsencode(part))
        if size > name_max:
            return f"has a name of {size} bytes; the file system allows at most {name_max}"
    path_max = _limit(existing, "PC_PATH_MAX", 4096)
    if len(os.fsencode(str(absolute))) >= path_max:
        return f"is longer than the file system allows ({path_max} bytes)"
    try:
        st = os.stat(absolute)
    except FileNotFoundError:
        st = None
    except OSError as exc:
        if exc.errno in (errno.ENOTDIR, errno.ELOOP, errno.ENAMETOOLONG):
            return f"cannot be a file ({exc.strerror})"
        st = None
    if st is not None and stat.S_ISDIR(st.st_mode):
        return "is a folder"
    if st is not None and not stat.S_ISREG(st.st_mode):
        return "exists and is not a regular file"
    if not os.access(existing, os.W_OK | os.X_OK):
        return f"is in {existing}, which is not writable"
    return None


def same_file(a: str | Path, b: str | Path) -> bool:
    """Whether paths ``a`` and ``b`` name one file (equal, through links, or hard-linked).

    >>> same_file("x/../data.csv", "data.csv")
    True
    """
    if Path(a).resolve() == Path(b).resolve():
        return True
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False
