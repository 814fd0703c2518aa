"""Output folders that never take a user's files with them.

A command that writes a folder of files (``batch --out``, ``demo --out``) builds the new set in a
temporary folder beside the target, writes a marker file into it listing every file of the set,
and only then puts it in place. An existing target is replaced only when it is empty or holds
nothing but the files its marker lists (a previous output set, by name); anything else stops the
command before it writes or deletes anything, naming the folder and the first foreign files. The
old set is removed file by file from the marker's list, so even a file that appears in it while a
run is under way is left where it is.

A command that writes one file (``memo -o``, ``check --history``, ``diff --csv``) replaces a file
at that path, which is its documented output, but never a folder, one of its own input files or a
file of a marked output set.
"""
from __future__ import annotations

import errno
import json
import os
import re
import secrets
import shutil
import sys
import tempfile
from pathlib import Path

from screening.errors import InputError
from screening.fileio import environment_problem, short_path, with_umask

MARKER = ".heatscreen-output-set.json"
SHOWN = 5  # foreign files named in a refusal


class OutputFolderError(InputError):
    """An output path that would replace or delete something that is not heatscreen's output."""

    def __init__(self, message: str):
        self.message = message
        super().__init__(message)


def _clean(names) -> list[str] | None:
    """Relative '/'-separated names inside the folder, or None if any is not."""
    if not isinstance(names, list):
        return None
    for name in names:
        if not isinstance(name, str) or not name or name.startswith("/") or "\\" in name \
                or any(part in ("", ".", "..") for part in name.split("/")):
            return None
    return names


def read_marker(folder: Path) -> tuple[list[str], list[str]] | None:
    """(files, folders) a folder's marker lists, relative and '/'-separated; None without a readable marker."""
    try:
        data = json.loads((Path(folder) / MARKER).read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, ValueError):
        return None
    if not isinstance(data, dict):
        return None
    files, folders = _clean(data.get("files")), _clean(data.get("folders", []))
    if files is None or folders is None:
        return None
    return files, folders


def _entries(folder: Path) -> tuple[list[str], list[str]]:
    """(files, folders) under ``folder``, relative and '/'-separated; links are not followed."""
    files, dirs = [], []
    for top, subdirs, names in os.walk(folder):
        rel = Path(top).relative_to(folder)
        for d in list(subdirs):
            p = Path(top) / d
            if p.is_symlink():  # a link to a folder is an entry of its own, never walked into
                subdirs.remove(d)
                files.append((rel / d).as_posix())
            else:
                dirs.append((rel / d).as_posix())
        files += [(rel / n).as_posix() for n in names]
    return sorted(files), sorted(dirs)


def _ours(marker: tuple[list[str], list[str]]) -> tuple[set[str], set[str]]:
    """The files (with the marker) and folders of a marked set."""
    files, folders = marker
    dirs = set(folders) | {p.as_posix() for f in files for p in Path(f).parents if p.as_posix() != "."}
    return set(files) | {MARKER}, dirs


def _foreign(folder: Path) -> list[str]:
    """What in ``folder`` is not part of the output set its marker lists (everything, without a marker)."""
    files, dirs = _entries(folder)
    marker = read_marker(folder)
    if marker is None:
        return sorted(files + [d + "/" for d in dirs if not any(f.startswith(d + "/") for f in files)])
    our_files, our_dirs = _ours(marker)
    return [f for f in files if f not in our_files] + [d + "/" for d in dirs if d not in our_dirs]


def check_output_folder(out: str | os.PathLike, option: str = "--out") -> Path:
    """Refuse an output folder that may not be replaced; returns the path the set will go to.

    Allowed: a path that does not exist yet (its parent folders are made), an empty folder, or a
    folder holding nothing but the files of a previous output set. A link to a folder is followed.
    """
    given = Path(out)
    target = Path(os.path.realpath(given)) if given.is_symlink() else Path(os.path.abspath(given))
    if target.parent == target:
        raise OutputFolderError(f"{option} {given}: the root of a file system cannot be an output folder")
    if not target.exists():
        if target.is_symlink():
            raise OutputFolderError(f"{option} {given} is a link to nothing; give a folder's own path")
        return target
    if not target.is_dir():
        raise OutputFolderError(f"{option} {given} is a file, not a folder; heatscreen does not replace it. "
                                f"Give a new folder's path, or an empty one.")
    foreign = _foreign(target)
    if foreign:
        shown = ", ".join(foreign[:SHOWN]) + (f" and {len(foreign) - SHOWN} more" if len(foreign) > SHOWN else "")
        why = ("it has no heatscreen output marker" if read_marker(target) is None
               else "they are not files of the previous output set")
        raise OutputFolderError(
            f"{option} {given}: the folder holds files heatscreen did not write ({shown}; {why}), and replacing "
            f"the folder would delete them. Nothing was written. Give a new folder's path or an empty one, or "
            f"move those files out (a folder written before output sets were marked must be emptied by hand).")
    return target


def check_inputs_outside(target: Path, inputs, option: str = "--out") -> None:
    """Refuse an output folder that holds one of the run's own inputs: replacing the set would delete or
    change it (a register read from a previous run's results.csv, say)."""
    root = Path(os.path.realpath(target))
    for item in inputs:
        if item is None:
            continue
        try:
            where = Path(os.path.realpath(item))
        except (OSError, ValueError):
            continue
        if where == root or root in where.parents:
            raise OutputFolderError(f"{option} {target} holds {item}, an input of this run; replacing the output "
                                    f"set there would delete or change it. Give another output folder, or move the "
                                    f"input out first.")


def new_build_folder(target: Path, option: str = "--out") -> Path:
    """A fresh temporary folder beside ``target`` for building the new set (parents are made).

    Its name carries this process's id, so that what a run killed outright (kill -9, a power cut)
    left behind is recognised and cleared by the next run for the same target (see
    :func:`recover_leftovers`). It gets the permissions the umask gives new folders.
    """
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
        recover_leftovers(target)
        build = Path(tempfile.mkdtemp(prefix=f".{target.name}.tmp-{os.getpid()}-", dir=str(target.parent)))
        with_umask(build, folder=True)
    except OSError as exc:
        problem = environment_problem(exc, f"{option} {short_path(target)}: cannot make a folder in "
                                           f"{short_path(target.parent)}")
        if problem is None:
            raise
        raise problem from None
    return build


_LEFTOVER = re.compile(r"^\.(?P<name>.+)\.(?P<kind>tmp|old)-(?P<pid>\d+)-[A-Za-z0-9_]+$")
_BUILD_SUFFIXES = (".json", ".csv", ".pdf", ".tmp")


def _alive(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # e.g. no permission: it exists
        return True
    return True


def recover_leftovers(target: Path) -> None:
    """Clear what runs for ``target`` that were killed outright left beside it.

    A previous set moved aside (``.NAME.old-PID-*``) by a run that died before the new set was in
    place is put back when nothing is at ``target`` (else its listed files are removed); a build
    folder (``.NAME.tmp-PID-*``) of a dead run loses the files heatscreen writes there (.json, .csv,
    .pdf and temporary files) and its folders left empty. Anything else in them stays. Folders of
    runs still alive are not touched.
    """
    try:
        entries = list(os.scandir(target.parent))
    except OSError:
        return
    leftovers = []
    for entry in entries:
        m = _LEFTOVER.match(entry.name)
        if m and m.group("name") == target.name and entry.is_dir(follow_symlinks=False) \
                and not _alive(int(m.group("pid"))):
            leftovers.append((m.group("kind"), Path(entry.path)))
    for kind, path in sorted(leftovers, key=lambda kp: kp[0] != "old"):  # a set to put back first
        try:
            if kind == "old" and not os.path.lexists(target) and read_marker(path) is not None:
                os.replace(path, target)
            elif kind == "old":
                remove_output_set(path)
            else:
                _remove_build(path)
        except OSError:
            pass


def _remove_build(folder: Path) -> None:
    for top, _dirs, names in os.walk(folder, topdown=False):
        for name in names:
            if name.endswith(_BUILD_SUFFIXES) or name == MARKER:
                try:
                    os.unlink(os.path.join(top, name))
                except OSError:
                    pass
        try:
            os.rmdir(top)
        except OSError:
            pass


def write_marker(folder: Path, command: str) -> None:
    """List every file and folder of the finished set in its marker (no dates or paths: same run, same bytes)."""
    files, dirs = _entries(folder)
    doc = {"about": "The files heatscreen wrote as one output set. heatscreen replaces this folder only while it "
                    "holds nothing but these files.",
           "command": command, "files": [f for f in files if f != MARKER], "folders": dirs}
    (folder / MARKER).write_text(json.dumps(doc, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")


def swap_in(build: Path, target: Path, option: str = "--out") -> None:
    """Put the finished set ``build`` at ``target``; a previous set there is moved aside, then removed.

    The target is checked again first (a file may have been added during the run); the old set's
    files are deleted one by one from its marker's list, never with the whole folder. Where the
    system can exchange two names in one step (Linux renameat2), the old set and the new one trade
    places atomically, so the old or the new set is at ``target`` at every moment, whatever
    happens to the process; elsewhere a run killed between the two renames leaves the old set
    aside, and the next run for the target puts it back (:func:`recover_leftovers`).
    """
    check_output_folder(target, option)
    try:
        if target.exists() and _exchange(build, target):
            remove_output_set(build)  # now the previous set
            return
        old = None
        if target.exists():
            old = target.with_name(f".{target.name}.old-{os.getpid()}-{secrets.token_hex(4)}")
            os.replace(target, old)
        try:
            os.replace(build, target)
        except BaseException:
            if old is not None:
                os.replace(old, target)  # put the previous set back
            raise
    except OSError as exc:
        problem = environment_problem(exc, f"{option} {short_path(target)}: cannot put the output set in place")
        if problem is None:
            raise
        raise problem from None
    if old is not None:
        remove_output_set(old)


_RENAME_EXCHANGE = 2
_AT_FDCWD = -100


def _exchange(a: Path, b: Path) -> bool:
    """Swap the names ``a`` and ``b`` in one step (Linux renameat2 with RENAME_EXCHANGE); False where
    the system or its file system cannot."""
    if not sys.platform.startswith("linux"):
        return False
    try:
        import ctypes

        libc = ctypes.CDLL(None, use_errno=True)
        fn = libc.renameat2
    except (OSError, AttributeError):
        return False
    fn.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint]
    fn.restype = ctypes.c_int
    if fn(_AT_FDCWD, os.fsencode(a), _AT_FDCWD, os.fsencode(b), _RENAME_EXCHANGE) == 0:
        return True
    err = ctypes.get_errno()
    if err in (errno.EINVAL, errno.ENOSYS, errno.ENOTSUP, errno.EOPNOTSUPP):
        return False
    raise OSError(err, os.strerror(err), str(b))


def remove_output_set(folder: Path) -> None:
    """Delete what of ``folder`` its marker lists (files, then folders left empty), and the folder if empty."""
    marker = read_marker(folder)
    files, dirs = _entries(folder)
    our_files, our_dirs = _ours(marker) if marker is not None else ({MARKER}, set())
    for rel in files:
        if rel in our_files and rel != MARKER:
            try:
                (folder / rel).unlink()
            except OSError:
                pass
    for rel in sorted(dirs, key=lambda d: d.count("/"), reverse=True):
        if rel in our_dirs:
            try:
                (folder / rel).rmdir()  # only when empty: anything else stays
            except OSError:
                pass
    for last in (lambda: (folder / MARKER).unlink(), folder.rmdir):  # the folder only when nothing is left
        try:
            last()
        except OSError:
            pass


def discard(build: Path) -> None:
    """Remove a build folder this run made itself (after a failure)."""
    shutil.rmtree(build, ignore_errors=True)


def check_single_output(path: str | os.PathLike, option: str, inputs=()) -> Path:
    """Refuse a one-file output path that is a folder, one of the command's inputs or a file of an output set."""
    p = Path(path)
    if p.is_dir():
        raise OutputFolderError(f"{option} {p} is a folder; give the path of a file to write")
    if p.exists():
        for item in inputs:
            if item is None:
                continue
            try:
                same = os.path.samefile(p, item)
            except OSError:
                same = False
            if same:
                raise OutputFolderError(f"{option} {p} is an input of this command ({item}); writing there would "
                                        f"replace it. Give another path.")
    here = Path(os.path.abspath(p))
    for folder in here.parents:
        marker = read_marker(folder)
        if marker is not None and here.relative_to(folder).as_posix() in _ours(marker)[0]:
            raise OutputFolderError(f"{option} {p} is a file of the output set in {folder}; writing there would "
                                    f"change that set. Give another path.")
    return p
