"""Which paths benchlog may read and write: regular files of a sane size in, outputs that destroy nothing.

Every reader of our files opens them through `open_input`: a FIFO would block
forever, `/dev/zero` never ends and a folder is not a file, so anything but a
regular file is refused at once, and a TOML file larger than `TOML_MAX_BYTES`
is refused with the limit in the message (run files are streamed and limited
per line instead, `RUN_LINE_MAX_BYTES`).

Every command that writes checks its target first with `check_output_file` or
`check_output_dir`: never one of the command's own inputs, never an existing
run file, never under /proc, /sys or /dev, never a read-only file system.
Those refusals are `BadInput` (exit 2, nothing written). A write that fails
part way (disk full, I/O error) is `CannotWrite` (exit 4), whose message says
what was kept. Stdlib only: any layer may use it.
"""

from __future__ import annotations

import errno
import fcntl
import os
import stat
from pathlib import Path
from typing import BinaryIO, Iterable

from benchlog.badinput import BadInput

#: Our TOML files (plans, benches, profiles, specs, designs) are a few kB; 4 MiB is far beyond any real one.
TOML_MAX_BYTES = 4 * 1024 * 1024
#: One run-file line: a header holds the plan and bench (a few kB); a point line is about 200 bytes.
RUN_LINE_MAX_BYTES = 1024 * 1024
#: Kernel and device trees: nothing of ours is ever written there.
SYSTEM_TREES = ("/proc", "/sys", "/dev")
#: The first bytes of every run file (the header record written by `runs.writer`).
RUN_FILE_START = b'{"record":"header","format":"benchlog-run"'


class CannotWrite(Exception):
    """An output that could not be written part way through (disk full, I/O error); exit code 4.

    `kept` says what is still on disk, so the user knows nothing measured was lost.
    """

    def __init__(self, path: str | os.PathLike[str], problem: str, kept: str = "") -> None:
        self.path = str(path)
        self.problem = problem
        self.kept = kept
        super().__init__(self.line())

    def line(self) -> str:
        text = f"{self.path}: {self.problem}"
        if self.kept:
            text += f"; {self.kept}"
        return " ".join(text.split())


def _mib(n: int) -> str:
    return f"{n / (1024 * 1024):g} MB"


def _kind(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a directory"
    if stat.S_ISFIFO(mode):
        return "a FIFO (named pipe)"
    if stat.S_ISCHR(mode):
        return "a character device"
    if stat.S_ISBLK(mode):
        return "a block device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def open_input(path: str | os.PathLike[str], what: str, *, max_bytes: int | None = None) -> BinaryIO:
    """Open a regular file for reading; anything else (FIFO, device, folder, too large) is `BadInput`.

    O_NONBLOCK makes the open of a FIFO return at once (without it, it waits for a
    writer forever); the check is made on the opened descriptor, so nothing can be
    swapped in between the check and the read. `what` names the file kind ("TOML file").
    """
    source = str(path)
    expected = f"an existing, readable {what}"
    try:
        fd = os.open(path, os.O_RDONLY | os.O_NONBLOCK | getattr(os, "O_CLOEXEC", 0))
    except FileNotFoundError:
        raise BadInput(source, "", "file not found", expected) from None
    except OSError as exc:
        raise BadInput(source, "", f"cannot be read ({exc.strerror or exc})", expected) from None
    try:
        info = os.fstat(fd)
        if not stat.S_ISREG(info.st_mode):
            raise BadInput(source, "", f"cannot be read: it is {_kind(info.st_mode)}", f"a regular {what}")
        if max_bytes is not None and info.st_size > max_bytes:
            raise BadInput(source, "", f"is {info.st_size} bytes, larger than the {_mib(max_bytes)} limit",
                           f"a {what} of at most {_mib(max_bytes)}")
        flags = fcntl.fcntl(fd, fcntl.F_GETFL)
        fcntl.fcntl(fd, fcntl.F_SETFL, flags & ~os.O_NONBLOCK)
        return os.fdopen(fd, "rb")
    except BaseException:
        os.close(fd)
        raise


def check_input(path: str | os.PathLike[str], what: str) -> None:
    """Refuse at once an input that is missing or not a regular file (before slower work starts)."""
    open_input(path, what).close()


def read_input(path: str | os.PathLike[str], what: str, *, max_bytes: int) -> bytes:
    """All bytes of a regular file of at most `max_bytes` (a file that grows meanwhile is cut and refused)."""
    with open_input(path, what, max_bytes=max_bytes) as f:
        try:
            data = f.read(max_bytes + 1)
        except OSError as exc:
            raise BadInput(str(path), "", f"cannot be read ({exc.strerror or exc})", f"a readable {what}") from None
    if len(data) > max_bytes:
        raise BadInput(str(path), "", f"is larger than the {_mib(max_bytes)} limit", f"a {what} of at most {_mib(max_bytes)}")
    return data


# -- outputs ---------------------------------------------------------------------------------


def _under_system_tree(path: Path) -> str | None:
    for tree in SYSTEM_TREES:
        if path == Path(tree) or Path(tree) in path.parents:
            return tree
    return None


def _same_file(a: Path, b: Path) -> bool:
    try:
        return os.path.samefile(a, b)
    except OSError:
        return a.resolve() == b.resolve()


def is_run_file(path: str | os.PathLike[str]) -> bool:
    """True when `path` is a regular file that starts like one of our run files."""
    try:
        with open_input(path, "run file") as f:
            return f.read(len(RUN_FILE_START)) == RUN_FILE_START
    except BadInput:
        return False


def _writable_folder(folder: Path, argument: str, shown: str) -> None:
    if not folder.exists():
        raise BadInput("argument", argument, f"folder '{folder}' of {shown} does not exist", "an existing folder")
    if not folder.is_dir():
        raise BadInput("argument", argument, f"'{folder}' in {shown} is not a folder", "a path inside a folder")
    try:
        read_only = bool(os.statvfs(folder).f_flag & os.ST_RDONLY)
    except OSError:
        read_only = False
    if read_only or not os.access(folder, os.W_OK | os.X_OK):
        raise BadInput("argument", argument, f"folder '{folder}' is read-only", "a folder you may write to")


def check_output_file(path: str | os.PathLike[str], argument: str, *,
                      inputs: Iterable[str | os.PathLike[str]] = ()) -> Path:
    """Refuse an output file that would destroy something or cannot be written; returns the path.

    Refused: a path under /proc, /sys or /dev, a folder, a FIFO or device, one of the
    command's own `inputs`, an existing run file, a missing, non-folder or read-only
    parent. An ordinary existing file (an earlier export or report) may be replaced.
    """
    target = Path(path)
    shown = f"'{target}'"
    resolved = Path(os.path.realpath(target))
    tree = _under_system_tree(resolved)
    if tree is not None:
        raise BadInput("argument", argument, f"{shown} is under {tree}, a system folder", "a path in a folder of your own")
    for source in inputs:
        src = Path(source)
        same = _same_file(target, src) if target.exists() and src.exists() else resolved == Path(os.path.realpath(src))
        if same:
            raise BadInput("argument", argument, f"{shown} is also an input of this command; writing it would destroy it",
                           "another file name")
    if target.exists() or target.is_symlink():
        try:
            mode = os.stat(target).st_mode
        except OSError as exc:
            raise BadInput("argument", argument, f"{shown} cannot be checked ({exc.strerror or exc})", "a writable path") from None
        if not stat.S_ISREG(mode):
            raise BadInput("argument", argument, f"{shown} is {_kind(mode)}", "a file name to write")
        if is_run_file(target):
            raise BadInput("argument", argument, f"{shown} is an existing run file; it is never overwritten",
                           "a new file name")
    _writable_folder(resolved.parent, argument, shown)
    return target


def check_output_dir(path: str | os.PathLike[str], argument: str) -> Path:
    """Refuse an output folder under /proc, /sys or /dev, a path that is a file, or a read-only folder."""
    folder = Path(path)
    resolved = Path(os.path.realpath(folder))
    tree = _under_system_tree(resolved)
    if tree is not None:
        raise BadInput("argument", argument, f"'{folder}' is under {tree}, a system folder", "a folder of your own")
    if folder.exists() and not folder.is_dir():
        raise BadInput("argument", argument, f"'{folder}' is a file, not a folder", "a folder for the output files")
    probe = resolved
    while not probe.exists():  # the folder will be created: its nearest existing ancestor must take it
        probe = probe.parent
    if not probe.is_dir():
        raise BadInput("argument", argument, f"'{probe}' in '{folder}' is not a folder", "a folder path")
    _writable_folder(probe, argument, f"'{folder}'")
    return folder


def write_failure(path: str | os.PathLike[str], exc: OSError, kept: str = "") -> CannotWrite:
    """The one-line error for an OSError while writing an output, naming the cause in plain words."""
    reasons = {
        errno.ENOSPC: "the disk is full",
        errno.EDQUOT: "the disk quota is used up",
        errno.EROFS: "the file system is read-only",
        errno.EACCES: "permission denied",
        errno.EPERM: "permission denied",
        errno.EIO: "an I/O error",
        errno.EISDIR: "it is a directory",
        errno.ENOTDIR: "a part of the path is not a folder",
        errno.ENOENT: "the folder does not exist",
    }
    reason = reasons.get(exc.errno or 0, exc.strerror or str(exc))
    return CannotWrite(path, f"cannot be written ({reason})", kept)
