"""Writing a file so that a crash never leaves half of it: a temporary file beside it, then a rename.

The temporary file, and the scratch folder the workbook writer keeps its own temporary
files in, sit in the output's folder (the final rename is atomic and nothing lands in
the system temporary folder) and are named ``.<stem>.<host>-<pid>.<token>.partial<suffix>``
and ``....partial.d``. They are removed on every exit path that runs Python code (an
error, SIGINT, and SIGTERM or SIGHUP once the command line turns those into an
exception). After a kill -9, the next write to the same output recognises them by name
(same host, a process id that no longer runs) and removes them, as well as the
``.<stem>.<8 characters>.partial<suffix>`` files of earlier versions once an hour old.

Without force, the final step is a hard link (or an exclusive create where the file
system has no hard links), so that a file that appeared at the output path while the
work was being done is never replaced.
"""
from __future__ import annotations

import errno
import os
import re
import secrets
import shutil
import socket
import time
from contextlib import contextmanager
from pathlib import Path
from typing import Iterator

from sheetbuilder.errors import OutputExists

PARTIAL = ".partial"
SCRATCH = ".d"
OLD_STYLE_AGE = 3600  # seconds


def _host() -> str:
    """This machine's name, reduced to characters safe in a file name."""
    return re.sub(r"[^A-Za-z0-9]", "", socket.gethostname())[:32] or "host"


def _alive(pid: int) -> bool:
    """Whether a process with this id runs on this machine."""
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def stale_partials(path: Path) -> list[Path]:
    """The temporary files and folders left beside path by writes whose process no longer runs."""
    path = Path(path)
    pattern = re.compile(r"\." + re.escape(path.stem) + r"\.(?P<host>[A-Za-z0-9]+)-(?P<pid>\d+)\.[A-Za-z0-9_-]+"
                         + re.escape(PARTIAL) + r"(?:" + re.escape(path.suffix) + "|" + re.escape(SCRATCH) + r")")
    # Earlier versions of this module named them .<stem>.<8 random characters>.partial<suffix>, without a
    # process id: those are taken as stale once untouched for OLD_STYLE_AGE seconds.
    old_style = re.compile(r"\." + re.escape(path.stem) + r"\.[a-z0-9_]{8}" + re.escape(PARTIAL + path.suffix))
    host = _host()
    stale = []
    try:
        names = os.listdir(path.parent)
    except OSError:
        return []
    for name in names:
        m = pattern.fullmatch(name)
        if m and m["host"] == host and int(m["pid"]) != os.getpid() and not _alive(int(m["pid"])):
            stale.append(path.parent / name)
        elif old_style.fullmatch(name) and _age(path.parent / name) > OLD_STYLE_AGE:
            stale.append(path.parent / name)
    return sorted(stale)


def _age(p: Path) -> float:
    """Seconds since p was last modified (0 when it is gone)."""
    try:
        return time.time() - p.stat().st_mtime
    except OSError:
        return 0.0


def _remove(p: Path) -> None:
    """Delete a file or a folder tree; quietly when it is already gone."""
    if p.is_dir() and not p.is_symlink():
        shutil.rmtree(p, ignore_errors=True)
    else:
        p.unlink(missing_ok=True)


def scratch_dir(tmp: Path) -> Path:
    """The scratch folder belonging to the temporary file tmp (created by atomic_output)."""
    return tmp.with_name(tmp.name[:tmp.name.rindex(PARTIAL)] + PARTIAL + SCRATCH)


def _publish(tmp: Path, path: Path, force: bool) -> None:
    """Move tmp to path: replace it with force, else refuse a file that exists now."""
    if force:
        os.replace(tmp, path)
        return
    exists = OutputExists(f"{path} exists (it appeared while this file was being written); nothing was replaced. "
                          "Add --force to overwrite it, or choose another name")
    try:
        os.link(tmp, path)
    except FileExistsError:
        raise exists from None
    except OSError as exc:
        if exc.errno not in (errno.EPERM, errno.ENOTSUP, errno.EOPNOTSUPP, errno.EXDEV, errno.EMLINK, errno.ENOSYS):
            raise
        try:  # no hard links here: claim the name exclusively, then move onto the claim
            os.close(os.open(path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o666))
        except FileExistsError:
            raise exists from None
        os.replace(tmp, path)
        return
    os.unlink(tmp)


@contextmanager
def atomic_output(path: Path, suffix: str, force: bool = False) -> Iterator[Path]:
    """Yield a temporary path beside path; move it onto path when the block succeeds, else delete it.

    Stale temporary files of earlier killed writes to path are removed first. The
    temporary file gets the permissions a new file would (the umask), not 0600; its
    scratch folder (:func:`scratch_dir`) is created and always removed.

    Args:
        path: the file to write.
        suffix: the temporary file's suffix (".xlsx", ".csv").
        force: replace path if it exists at the end; without it a file that exists then is kept
            and OutputExists is raised.

    Raises:
        OutputExists: force is False and path exists when the work is done.
    """
    path = Path(path)
    for stale in stale_partials(path.with_suffix(suffix)):
        _remove(stale)
    name = f".{path.stem}.{_host()}-{os.getpid()}.{secrets.token_hex(4)}{PARTIAL}{suffix}"
    tmp = path.parent / name
    umask = os.umask(0)
    os.umask(umask)
    os.close(os.open(tmp, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o666 & ~umask))
    scratch = scratch_dir(tmp)
    try:
        scratch.mkdir()
        yield tmp
        _publish(tmp, path, force)
    finally:
        tmp.unlink(missing_ok=True)
        shutil.rmtree(scratch, ignore_errors=True)


def same_file(a: Path, b: Path) -> bool:
    """Whether a and b name the same file: the same resolved path, or the same file on disk (links)."""
    a, b = Path(a), Path(b)
    if a.resolve() == b.resolve():
        return True
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False


def refuse_input_as_output(output: Path, inputs: dict[str, Path]) -> None:
    """Refuse an output path that is one of the files read (with or without --force).

    Args:
        output: the file about to be written.
        inputs: what each read file is (shown in the message) -> its path.

    Raises:
        UnsafeOutput: output is one of the inputs.
    """
    from sheetbuilder.errors import UnsafeOutput
    for what, path in inputs.items():
        if same_file(output, path):
            raise UnsafeOutput(f"{output} is {what}, which is only read; write the output under another name")
