"""Writing output files without losing work: atomic replace, no silent overwrite."""

from __future__ import annotations

import os
import tempfile

from .errors import UserError


def write_text_atomic(path: str | os.PathLike, text: str, *, force: bool = False) -> None:
    """Write ``text`` to ``path`` through a temporary file in the same folder.

    Refuses (UserError) to replace an existing file unless ``force``.
    """
    path = os.fspath(path)
    if os.path.exists(path) and not force:
        raise UserError("exists already; give --force to overwrite it", file=path)
    folder = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(folder):
        raise UserError("the folder does not exist", file=path)
    fd, tmp = tempfile.mkstemp(dir=folder, prefix=".tmp-", suffix=os.path.basename(path))
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as f:
            f.write(text)
        umask = os.umask(0)  # a temporary file is private; the result gets the usual mode
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
