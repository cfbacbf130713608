"""Opening a record log for reading only, also in a folder the user may not write to.

A log in WAL mode is read with its ``-shm`` index file; SQLite creates that file on first
open, which it cannot do in a read-only folder ("attempt to write a readonly
database").  There the log is opened ``immutable``: SQLite then reads the file as it
stands, without the index (no one who may not write to the folder can change the log
while it is read; a writer with permission would have left the index in place).

Examples
--------
>>> import tempfile, pathlib
>>> folder = pathlib.Path(tempfile.mkdtemp())
>>> read_only_uri(folder / "record-log.sqlite").endswith("?mode=ro")
True
"""

from __future__ import annotations

import os
from pathlib import Path


def read_only_uri(path: str | os.PathLike) -> str:
    """The SQLite URI that opens ``path`` for reading: ``mode=ro``, plus ``immutable=1``
    when its folder is not writable and no ``-shm`` file exists."""
    path = Path(path)
    immutable = (not os.access(path.parent, os.W_OK)
                 and not Path(f"{path}-shm").exists())
    return f"file:{path}?mode=ro" + ("&immutable=1" if immutable else "")
