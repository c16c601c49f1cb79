"""The one place for atomic writes: every output file is written to a temporary file in the
target folder and renamed into place, so a failure never leaves a half-written file."""
from __future__ import annotations

import os
import tempfile
from contextlib import contextmanager


def _default_permissions(path) -> None:
    """mkstemp creates 0600 files; give the file the permissions a plain open() would."""
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(path, 0o666 & ~umask)


@contextmanager
def atomic_open(path, mode: str = "w"):
    """Open a temporary file beside ``path`` for writing; on success it replaces ``path`` atomically.

    The file gets ordinary file permissions (what a plain ``open()`` would give under the umask);
    on any failure the temporary file is removed and ``path`` is left as it was.  Text mode opens
    with ``newline=""``.

    Parameters
    ----------
    path : str or os.PathLike
        The file to write.
    mode : str, optional
        ``open`` mode, ``"w"`` (default) or ``"wb"``.

    Yields
    ------
    file object
        The open temporary file.
    """
    with temporary_path(path) as tmp:
        with open(tmp, mode, **({"newline": ""} if "b" not in mode else {})) as fh:
            yield fh


def atomic_write_text(path, text: str) -> None:
    """Write ``text`` to ``path`` via a temporary file and an atomic rename.

    Parameters
    ----------
    path : str or os.PathLike
        The file to write.
    text : str
        Its whole content (written as it is; no newline translation).
    """
    with atomic_open(path, "w") as fh:
        fh.write(text)


def atomic_write_bytes(path, data: bytes) -> None:
    """Write ``data`` to ``path`` via a temporary file and an atomic rename.

    Parameters
    ----------
    path : str or os.PathLike
        The file to write.
    data : bytes
        Its whole content.
    """
    with atomic_open(path, "wb") as fh:
        fh.write(data)


@contextmanager
def temporary_path(path):
    """A temporary file name beside ``path`` for a writer that opens files by name (HDF5).

    On success the file replaces ``path`` atomically, on any failure it is removed.

    Parameters
    ----------
    path : str or os.PathLike
        The final file.

    Yields
    ------
    str
        The temporary file's path (already created, empty).
    """
    path = os.fspath(path)
    fd, tmp = tempfile.mkstemp(prefix=".tessera-", suffix=".tmp", dir=os.path.dirname(os.path.abspath(path)))
    os.close(fd)
    try:
        yield tmp
        _default_permissions(tmp)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise
