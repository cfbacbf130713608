"""Opening a record log for reading only, also in a folder the user may not write to;
and reading its text strictly (:func:`utf8_text`).

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


def utf8_text(data: bytes) -> str:
    """SQLite text as ``str`` (a connection's ``text_factory``); text that is not UTF-8 is
    damage, reported as :class:`~trialkit.exceptions.RecordLogError`, never decoded with
    replacement characters (which would change a recorded value silently)."""
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError:
        from trialkit.exceptions import RecordLogError

        raise RecordLogError("the record log holds text that is not valid UTF-8: it is "
                             "damaged. Nothing was changed; restore it from a backup "
                             "('trialkit verify' names what it can check).") from None
