"""Writing output files whole or not at all (the one writer every command uses)."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path


def write_atomic(path: str | Path, data: str | bytes) -> None:
    """Write a whole file or nothing: a temp file in the same folder, then os.replace.

    Parameters
    ----------
    path : the file to write (its folder must exist)
    data : text (written as UTF-8) or bytes (written as they are)

    The file ends up with mode 0644 (mkstemp makes it private; an output is an ordinary file).
    On any failure the temp file is removed and an existing file at ``path`` is left untouched.
    """
    path = Path(path)
    mode = "wb" if isinstance(data, bytes) else "w"
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent or ".")
    try:
        with os.fdopen(fd, mode, **({} if mode == "wb" else {"encoding": "utf-8"})) as fh:
            fh.write(data)
        os.chmod(tmp, 0o644)
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
