"""Safe file writing: temporary name then rename, an output folder that is never silently overwritten.

Every file formfind writes goes through `write_text` / `write_bytes`, so an interrupted run leaves
either the complete new file or the old one, never half of either.
"""

from __future__ import annotations

import os
import re
import tempfile
from pathlib import Path

from formfind.errors import OutputError

_UNSAFE = re.compile(r"[^A-Za-z0-9_.+-]+")


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def safe_name(name: str) -> str:
    """A file-system-safe version of a name from a case file: no separators, no leading dots."""
    cleaned = _UNSAFE.sub("-", name).strip(".-") or "unnamed"
    return cleaned[:64]


def write_bytes(path: Path, data: bytes) -> Path:
    """Write ``data`` to ``path`` atomically (temporary file in the same folder, then rename)."""
    path = Path(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, 0o666 & ~_umask())
        os.replace(tmp, path)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    return path


def write_text(path: Path, text: str) -> Path:
    """Write UTF-8 text atomically; see `write_bytes`."""
    return write_bytes(path, text.encode("utf-8"))


def prepare_folder(folder: Path, names: list[str], overwrite: bool) -> Path:
    """Create ``folder`` and make sure none of ``names`` in it would be overwritten unasked.

    Raises:
        OutputError: if the folder cannot be created, or if files of these names exist and
            ``overwrite`` is False.
    """
    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        raise OutputError(f"{folder}: exists and is not a folder")
    existing = [n for n in names if (folder / n).exists()]
    if existing and not overwrite:
        raise OutputError(
            f"{folder}: would overwrite {', '.join(existing[:3])}{' ...' if len(existing) > 3 else ''};"
            " pass --overwrite to replace earlier outputs"
        )
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"{folder}: cannot create the output folder ({exc.strerror})") from None
    return folder


class StreamingFile:
    """A text file written piece by piece to a temporary name and renamed into place on `commit`.

    For outputs too long to build in memory (a study's table): ``write`` appends, ``commit``
    flushes, syncs and renames; leaving the ``with`` block without committing (an error) deletes the
    temporary file, so no partial file ever carries the final name.
    """

    def __init__(self, path: Path) -> None:
        self.path = Path(path)
        fd, self._tmp = tempfile.mkstemp(prefix=f".{self.path.name}.", suffix=".part", dir=self.path.parent)
        self._fh = os.fdopen(fd, "w", encoding="utf-8", newline="")
        self._done = False

    def write(self, text: str) -> None:
        """Append text."""
        self._fh.write(text)

    def commit(self) -> Path:
        """Finish the file and give it its final name."""
        self._fh.flush()
        os.fsync(self._fh.fileno())
        self._fh.close()
        os.chmod(self._tmp, 0o666 & ~_umask())
        os.replace(self._tmp, self.path)
        self._done = True
        return self.path

    def __enter__(self) -> StreamingFile:
        return self

    def __exit__(self, *exc) -> None:
        if not self._done:
            self._fh.close()
            try:
                os.unlink(self._tmp)
            except FileNotFoundError:
                pass
