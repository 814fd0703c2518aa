"""Users' files and folders: reading with a size limit, writing with the process umask, and the
operating system's refusals (disk full, read-only, a name too long, a symlink loop) in words with
the path, as :class:`~screening.errors.EnvironmentProblem` (exit code 2)."""
from __future__ import annotations

import errno
import os
import stat

from screening.errors import EnvironmentProblem


def short_path(path, limit: int = 200) -> str:
    """A path for a message: cut in the middle when very long, with control characters escaped."""
    text = str(path)
    if len(text) > limit:
        text = f"{text[:limit // 2]}\u2026{text[-limit // 2:]} ({len(text)} characters)"
    return "".join(ch if ch.isprintable() else ascii(ch)[1:-1] for ch in text)


def os_problem(exc: BaseException) -> str:
    """The reason an operating-system call refused a path, in words (no Python exception names)."""
    if isinstance(exc, ValueError):  # e.g. an embedded NUL in a path
        return "the name holds a character that is not allowed in a file name"
    if isinstance(exc, RuntimeError):  # Path.resolve on a symlink loop (Python before 3.13)
        return "symbolic links point in a loop"
    if isinstance(exc, OSError):
        if exc.errno == errno.ENOSPC:
            return "no space left on the device (disk full)"
        if exc.errno == errno.EDQUOT:
            return "disk quota exceeded"
        if exc.errno == errno.ELOOP:
            return "symbolic links point in a loop"
        if exc.errno == errno.ENAMETOOLONG:
            return "the name is too long for the file system"
        if exc.errno in (errno.EROFS,):
            return "the file system is read-only"
        return exc.strerror or str(exc)
    return str(exc)


def read_limited(path, limit: int, regular_only: bool = False) -> bytes:
    """The bytes of a user's file, refusing one larger than ``limit`` bytes before reading it all.

    Raises :class:`EnvironmentProblem` with the path and the reason for a file that cannot be read
    (missing, a folder, no permission, a symlink loop, a name too long or holding NUL). With
    ``regular_only``, a pipe or device (which could block forever) is refused too.
    """
    where = short_path(path)
    try:
        fd = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) if regular_only else os.O_RDONLY)
    except FileNotFoundError:
        raise EnvironmentProblem(f"no such file: {where}", "no such file") from None
    except (OSError, ValueError) as exc:
        raise EnvironmentProblem(f"cannot read {where}: {os_problem(exc)}", os_problem(exc)) from None
    try:
        info = os.fstat(fd)
        if stat.S_ISDIR(info.st_mode):
            raise EnvironmentProblem(f"{where} is a folder, not a file", "a folder, not a file")
        if regular_only and not stat.S_ISREG(info.st_mode):
            raise EnvironmentProblem(f"{where} is not a regular file (a pipe or a device)",
                                     "not a regular file (a pipe or a device)")
        if stat.S_ISREG(info.st_mode) and info.st_size > limit:
            raise EnvironmentProblem(f"{where} is larger than {limit} bytes ({info.st_size} bytes)",
                                     f"larger than {limit} bytes ({info.st_size} bytes)")
        chunks, size = [], 0
        while size <= limit:
            block = os.read(fd, min(1 << 20, limit + 1 - size))
            if not block:
                break
            chunks.append(block)
            size += len(block)
        if size > limit:
            raise EnvironmentProblem(f"{where} is larger than {limit} bytes", f"larger than {limit} bytes")
        return b"".join(chunks)
    except OSError as exc:
        raise EnvironmentProblem(f"cannot read {where}: {os_problem(exc)}", os_problem(exc)) from None
    finally:
        os.close(fd)


#: errno values that mean "the user's file system refuses this" rather than a fault of the tool
ENVIRONMENT_ERRNOS = frozenset(getattr(errno, name) for name in (
    "ENOSPC", "EDQUOT", "EROFS", "EACCES", "EPERM", "ENAMETOOLONG", "ELOOP", "ENOTDIR", "EISDIR", "ENOENT",
    "EFBIG", "EXDEV", "EMLINK", "ETXTBSY", "EBUSY") if hasattr(errno, name))


def environment_problem(exc: BaseException, what: str) -> EnvironmentProblem | None:
    """``exc`` as the user's environment problem while doing ``what`` (e.g. "writing the output set in
    /data/run"), naming the file it concerns when the system says; None if it is not one."""
    if isinstance(exc, EnvironmentProblem):
        return exc
    if not isinstance(exc, OSError) or exc.errno not in ENVIRONMENT_ERRNOS:
        return None
    reason = os_problem(exc)
    name = f" ({short_path(exc.filename)})" if getattr(exc, "filename", None) else ""
    return EnvironmentProblem(f"{what}: {reason}{name}", reason)


def current_umask() -> int:
    """The process umask (read by setting and restoring it; no other thread should create files meanwhile)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask


def with_umask(path, folder: bool = False) -> None:
    """Give a file or folder made by ``tempfile`` (0600 / 0700) the permissions the umask gives new
    files (0666 & ~umask) or folders (0777 & ~umask), as any other program's outputs get."""
    os.chmod(path, (0o777 if folder else 0o666) & ~current_umask())
