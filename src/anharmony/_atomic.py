"""Safe result files: atomic writes, one writer per file, and stale temporaries removed.

* :func:`atomic_write` writes to a temporary file in the target folder and renames it into
  place. Same folder means same filesystem, so the rename is atomic on POSIX (PITFALLS §1): a
  reader never sees half a file. With ``exclusive=True`` the temporary is *linked* onto the
  final name, which fails if that name exists, so a result that appeared meanwhile is never
  replaced.
* The temporary is named ``.<name>.<host>-<pid>.<random><suffix>``: a run that was killed
  (``kill -9``) leaves one behind, and a later writer of the same file removes it once it can
  prove the writer is gone (same host, pid no longer running: :func:`remove_stale_temporaries`).
  A temporary of a live process, of another host or of another naming is never touched.
* :func:`claim` takes the lock file ``.<name>.lock`` (an ``flock`` on it, held while the claim
  lives; the file holds the holder's pid, host and start time). A second writer of the same
  file gets :class:`OutputHeldError` naming the holder. The kernel drops an ``flock`` when its
  process dies, so a lock file left by a killed run is stale by construction: the next claim
  takes it over (and says so in ``Claim.took_over``).
"""

from __future__ import annotations

import atexit
import contextlib
import datetime as _dt
import errno
import json
import os
import re
import socket
import tempfile
from collections.abc import Callable
from pathlib import Path

from .errors import AnharmonyError

__all__ = ["Claim", "OutputHeldError", "atomic_write", "claim", "close_inherited_claims",
           "process_alive", "remove_stale_temporaries"]

LOCK_SUFFIX = ".lock"


class OutputHeldError(AnharmonyError, OSError):
    """Another process is writing the same output; ``.holder`` describes it (pid, host)."""

    def __init__(self, target: Path, holder: dict) -> None:
        self.target = target
        self.holder = holder
        super().__init__(f"{target}: being written by another process ({describe_holder(holder)}; "
                         f"lock file {lock_path(target).name})")


def describe_holder(holder: dict) -> str:
    """``pid 1234 on host h, since 2026-…`` from the contents of a lock file."""
    if not holder:
        return "holder unknown: the lock file is empty"
    text = f"pid {holder.get('pid', '?')} on host {holder.get('host', '?')}"
    if holder.get("since"):
        text += f", since {holder['since']}"
    return text


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _host() -> str:
    # no '/' (a path) and no whitespace in a file name; the rest of the host name is kept
    return re.sub(r"[/\s]", "_", socket.gethostname()) or "localhost"


def _start_time(pid: int) -> str | None:
    """The start time of process ``pid`` (clock ticks since boot, Linux), or None."""
    try:
        stat = Path(f"/proc/{pid}/stat").read_text()
    except OSError:
        return None
    return stat.rsplit(")", 1)[-1].split()[19]  # field 22 of proc(5): starttime


def process_alive(pid: int) -> bool:
    """Whether a process ``pid`` runs on this host (one we may not signal counts as alive)."""
    if pid <= 0:
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


# --------------------------------------------------------------------------- temporaries
def _temp_pattern(target: Path, suffix: str) -> re.Pattern[str]:
    return re.compile(re.escape(f".{target.name}.") + r"(?P<host>.+)-(?P<pid>\d+)\.[a-z0-9_]+"
                      + re.escape(suffix) + "$")


def remove_stale_temporaries(target: str | os.PathLike, suffix: str) -> list[Path]:
    """Remove the temporaries of ``target`` whose writer is provably gone; return them.

    Only names of the form ``.<name>.<host>-<pid>.<random><suffix>`` are considered, and only
    those of this host whose pid no longer runs (nor is this process).
    """
    target = Path(target)
    pattern = _temp_pattern(target, suffix)
    host = _host()
    removed = []
    try:
        entries = list(os.scandir(target.parent))
    except OSError:
        return removed
    for entry in entries:
        m = pattern.match(entry.name)
        if m is None or m["host"] != host:
            continue
        pid = int(m["pid"])
        if pid == os.getpid() or process_alive(pid):
            continue
        with contextlib.suppress(FileNotFoundError):
            os.unlink(entry.path)
            removed.append(Path(entry.path))
    return removed


def atomic_write(target: str | os.PathLike, write: Callable[[str], None], suffix: str, *,
                 exclusive: bool = False) -> Path:
    """Call ``write(tmp)`` on ``.<name>.<host>-<pid>.<random><suffix>`` beside ``target``,
    then move it into place.

    The file gets the permissions a plain ``open`` would give (0666 less the umask). With
    ``exclusive`` the final name must not exist (checked atomically by a hard link; on a
    filesystem without hard links, by a check just before the rename).

    Raises
    ------
    FileExistsError
        With ``exclusive``, if ``target`` exists (the temporary is removed).
    """
    target = Path(target)
    fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=f".{target.name}.{_host()}-{os.getpid()}.",
                               suffix=suffix)
    os.close(fd)
    try:
        write(tmp)
        os.chmod(tmp, 0o666 & ~_umask())
        if exclusive:
            _place_exclusively(tmp, target)
        else:
            os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise
    return target


def _place_exclusively(tmp: str, target: Path) -> None:
    try:
        os.link(tmp, target)
    except FileExistsError:
        raise FileExistsError(errno.EEXIST, "exists (written meanwhile by another process?); "
                              "not replaced", str(target)) from None
    except OSError as exc:
        if exc.errno not in (errno.EPERM, errno.EOPNOTSUPP, errno.ENOTSUP, errno.EMLINK):
            raise
        if target.exists():  # no hard links here: the claim alone keeps other writers out
            raise FileExistsError(errno.EEXIST, "exists; not replaced", str(target)) from None
        os.replace(tmp, target)
        return
    os.unlink(tmp)


# --------------------------------------------------------------------------- claims
def lock_path(target: Path) -> Path:
    return target.parent / f".{target.name}{LOCK_SUFFIX}"


_CLAIMS: dict[Path, Claim] = {}  # the claims this process holds, by resolved target


@atexit.register
def _release_all() -> None:  # a process that ends normally leaves no lock file behind
    for c in list(_CLAIMS.values()):
        c._depth = 1
        c.release()


class Claim:
    """This process's claim on one output file (see :func:`claim`); release it when done."""

    def __init__(self, target: Path, fd: int, took_over: dict | None) -> None:
        self.target = target
        self.lock = lock_path(target)
        self.fd: int | None = fd
        self.took_over = took_over  # the contents of a stale lock file taken over, or None
        self._owner = os.getpid()
        self._depth = 1  # claim() again in this process: one more release() to drop it

    def release(self) -> None:
        """Remove the lock file and drop the lock once every claim() of it is released
        (extra calls do nothing; a forked child never releases its parent's claim)."""
        if self.fd is None or os.getpid() != self._owner:
            return
        self._depth -= 1
        if self._depth > 0:
            return
        fd, self.fd = self.fd, None
        _CLAIMS.pop(self.target.resolve(), None)
        try:
            # unlink while still holding the lock: a waiter that opened the old file finds
            # it gone after locking it and retries on a new one (see claim)
            with contextlib.suppress(FileNotFoundError):
                os.unlink(self.lock)
        finally:
            os.close(fd)

    def __enter__(self) -> Claim:
        return self

    def __exit__(self, *exc: object) -> None:
        self.release()


def _read_holder(fd: int) -> dict:
    try:
        os.lseek(fd, 0, os.SEEK_SET)
        text = os.read(fd, 4096).decode("utf-8", "replace")
        return json.loads(text) if text.strip() else {}
    except (OSError, ValueError):
        return {}


def claim(target: str | os.PathLike) -> Claim:
    """Claim ``target`` for writing: take the lock ``.<name>.lock`` beside it.

    Re-entrant within a process (the existing claim is returned). A lock file whose ``flock``
    is free was left by a process that is gone; it is taken over.

    Raises
    ------
    OutputHeldError
        If another process holds the claim (its pid and host are named).
    OSError
        If the lock file cannot be created (e.g. the folder is not writable).
    """
    try:
        import fcntl
    except ImportError:  # not POSIX: the lock file's contents alone decide
        fcntl = None

    target = Path(target)
    key = target.resolve()
    held = _CLAIMS.get(key)
    if held is not None and held.fd is not None and held._owner == os.getpid():
        held._depth += 1
        return held
    lock = lock_path(target)
    for _ in range(100):  # retries only when a holder released the lock file under us
        fd = os.open(lock, os.O_RDWR | os.O_CREAT | getattr(os, "O_CLOEXEC", 0),
                     0o666 & ~_umask())
        try:
            if fcntl is None:
                raise OSError(errno.ENOLCK, "no flock")
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            holder = _read_holder(fd)
            os.close(fd)
            raise OutputHeldError(target, holder) from None
        except OSError as exc:  # no flock on this filesystem: the lock file's contents decide
            if exc.errno not in (errno.ENOLCK, errno.EOPNOTSUPP, errno.ENOTSUP, errno.EINVAL):
                os.close(fd)
                raise
            holder = _read_holder(fd)
            if holder and not _stale(holder):
                os.close(fd)
                raise OutputHeldError(target, holder) from None
        try:
            same = os.fstat(fd).st_ino == os.stat(lock).st_ino
        except FileNotFoundError:
            same = False
        if not same:  # the file was released (unlinked) between our open and our lock
            os.close(fd)
            continue
        previous = _read_holder(fd)
        me = {"pid": os.getpid(), "host": _host(), "start": _start_time(os.getpid()),
              "since": _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat()}
        os.ftruncate(fd, 0)
        os.lseek(fd, 0, os.SEEK_SET)
        os.write(fd, (json.dumps(me) + "\n").encode())
        c = Claim(target, fd, previous or None)
        _CLAIMS[key] = c
        return c
    raise OSError(errno.EAGAIN, "could not take the lock file (it kept changing)", str(lock))


def _stale(holder: dict) -> bool:
    """A lock file's holder that is provably gone: this host, and its pid is not running
    (or runs with another start time: the pid was reused)."""
    if holder.get("host") != _host():
        return False
    try:
        pid = int(holder.get("pid", -1))
    except (TypeError, ValueError):
        return False
    if not process_alive(pid):
        return True
    start = holder.get("start")
    return start is not None and _start_time(pid) not in (None, start)


def close_inherited_claims() -> None:
    """In a forked worker: close the lock descriptors inherited from the parent.

    Closing a copy never drops the parent's lock; it only keeps a worker that outlives a
    killed parent from holding the lock on.
    """
    for c in list(_CLAIMS.values()):
        if c.fd is not None:
            with contextlib.suppress(OSError):
                os.close(c.fd)
            c.fd = None
    _CLAIMS.clear()
