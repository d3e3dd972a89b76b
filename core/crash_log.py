"""Log files for unexpected errors: the traceback goes to a file, the user sees one line naming it."""

from __future__ import annotations

import os
import tempfile
import time
import traceback
from pathlib import Path

from . import __version__
from .paths import cache_dir


def write_crash_log(context: str, error: BaseException) -> str:
    """Write ``error``'s traceback and ``context`` (the command, say) to a new log file under the
    cache folder (else the temporary folder); return its path, or why none could be written."""
    text = (f"skyloom {__version__}\n{context}\n\n"
            + "".join(traceback.format_exception(type(error), error, error.__traceback__)))
    name = f"crash-{time.strftime('%Y%m%d-%H%M%S')}-{os.getpid()}.log"
    for folder in (cache_dir() / "logs", Path(tempfile.gettempdir())):
        try:
            folder.mkdir(parents=True, exist_ok=True)
            (folder / name).write_text(text, encoding="utf-8")
            return str(folder / name)
        except OSError:
            continue
    return "(no log: neither the cache folder nor the temporary folder is writable)"
