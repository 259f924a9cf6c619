"""Writing a file so that a crash never leaves half of it: a temporary file beside it, then a rename."""
from __future__ import annotations

import os
import tempfile
from contextlib import contextmanager
from pathlib import Path
from typing import Iterator


@contextmanager
def atomic_output(path: Path, suffix: str) -> Iterator[Path]:
    """Yield a temporary path beside path; rename it onto path when the block succeeds, else delete it.

    The temporary file gets the permissions a new file would (the umask), not mkstemp's 0600.
    """
    path = Path(path)
    fd, tmp = tempfile.mkstemp(prefix="." + path.stem + ".", suffix=".partial" + suffix, dir=path.parent)
    os.close(fd)
    try:
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)
        yield Path(tmp)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
