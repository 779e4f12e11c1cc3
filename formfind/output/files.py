"""Safe file writing: temporary name then rename, an output folder that is never silently overwritten.

Every file formfind writes goes through `write_text` / `write_bytes`, so an interrupted run leaves
either the complete new file or the old one, never half of either. A run's files form a set
(`write_set`): they are written whole into a hidden sibling folder and the two folders are then
swapped in one step, so a run killed at any moment leaves either the complete old set or the complete
new one; what a killed run left behind is cleaned up by the next. A full disk, a file that cannot be
written, or a folder standing where a file should go is an `OutputError` (exit code 5), never a
half-written folder.
"""

from __future__ import annotations

import contextlib
import ctypes
import errno
import os
import re
import secrets
import shutil
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


# ------------------------------------------------------------------------------- sets of files
_HIDDEN = ".{name}.formfind-{kind}-"  # prefix of the sibling folders of a set being written or replaced


def _siblings(folder: Path, kind: str) -> list[Path]:
    prefix = _HIDDEN.format(name=folder.name, kind=kind)
    try:
        return sorted(p for p in folder.parent.iterdir() if p.name.startswith(prefix))
    except FileNotFoundError:
        return []


def clean_leftovers(folder: Path) -> None:
    """Remove what a killed run left beside ``folder``: a half-written new set, or an old set that was
    being replaced (restored first if the run died between the two steps of a swap without
    exchange)."""
    old = _siblings(folder, "old")
    if old and not folder.exists():
        os.replace(old[-1], folder)  # the swap lost its middle: put the old set back
        old = old[:-1]
    for leftover in _siblings(folder, "new") + old:
        shutil.rmtree(leftover, ignore_errors=True)


def _exchange(a: Path, b: Path) -> bool:
    """Swap two paths in one step (Linux renameat2 with RENAME_EXCHANGE); False where unsupported."""
    try:
        renameat2 = ctypes.CDLL(None, use_errno=True).renameat2
    except (OSError, AttributeError):
        return False
    at_fdcwd, rename_exchange = -100, 2
    done = renameat2(at_fdcwd, os.fsencode(a), at_fdcwd, os.fsencode(b), rename_exchange)
    return done == 0


def check_destination(folder: Path, names: list[str], overwrite: bool) -> None:
    """Refuse early, before any work, if ``folder`` cannot take a set of ``names``: a file where the
    folder should be, earlier outputs without ``overwrite``, or a folder where one of the files should
    go. Creates nothing.

    Raises:
        OutputError: with the path and what to do.
    """
    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        raise OutputError(f"{folder}: exists and is not a folder")
    existing = [n for n in names if (folder / n).exists() or (folder / n).is_symlink()]
    if existing and not overwrite:
        raise OutputError(
            f"{folder}: would overwrite {', '.join(existing[:3])}{' ...' if len(existing) > 3 else ''};"
            " pass --overwrite to replace earlier outputs"
        )
    for name in existing:
        if (folder / name).is_dir() and not (folder / name).is_symlink():
            raise OutputError(f"{folder / name}: is a folder where formfind writes a file; move it away or "
                              "choose another --out")


def write_set(folder: Path, contents: dict[str, bytes], overwrite: bool, owned: set[str] = frozenset()) -> list[Path]:
    """Write a set of files into ``folder`` all at once (module docstring).

    ``owned``: names an earlier set wrote there (from its manifest); they are dropped unless written
    again, while any other entry of an existing folder (another command's files) is carried over.

    Raises:
        OutputError: if the folder cannot take the set, or writing fails (full disk, permissions).
    """
    folder = Path(folder)
    names = sorted(contents)
    clean_leftovers(folder)
    check_destination(folder, names, overwrite)
    created = [q for q in (folder.parent, *folder.parent.parents) if not q.exists()]
    try:
        folder.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(f"{folder.parent}: cannot create the output folder ({exc.strerror})") from None
    token = secrets.token_hex(6)
    staging = folder.parent / (_HIDDEN.format(name=folder.name, kind="new") + token)
    try:
        staging.mkdir()
        for name in names:
            _write_in(staging / name, contents[name])
        if folder.exists():
            for entry in folder.iterdir():  # another command's files stay with the folder
                if entry.name not in contents and entry.name not in owned:
                    target = staging / entry.name
                    if entry.is_dir() and not entry.is_symlink():
                        shutil.copytree(entry, target, symlinks=True)
                    else:
                        try:
                            os.link(entry, target, follow_symlinks=False)
                        except OSError:
                            shutil.copy2(entry, target, follow_symlinks=False)
        _fsync_dir(staging)
        if not folder.exists():
            os.replace(staging, folder)
        elif _exchange(staging, folder):
            shutil.rmtree(staging, ignore_errors=True)  # staging now holds the old set
        else:
            retired = folder.parent / (_HIDDEN.format(name=folder.name, kind="old") + token)
            os.replace(folder, retired)
            os.replace(staging, folder)
            shutil.rmtree(retired, ignore_errors=True)
        _fsync_dir(folder.parent)
    except OSError as exc:
        shutil.rmtree(staging, ignore_errors=True)
        for made in created:  # the folders this call created, now empty: leave nothing behind
            with contextlib.suppress(OSError):
                made.rmdir()
        reason = "the disk is full" if exc.errno in (errno.ENOSPC, errno.EDQUOT) else (exc.strerror or str(exc))
        raise OutputError(f"{folder}: the outputs could not be written ({reason}); earlier outputs are unchanged") from None
    return [folder / name for name in names]


def _write_in(path: Path, data: bytes) -> None:
    with open(path, "wb") as handle:
        handle.write(data)
        handle.flush()
        os.fsync(handle.fileno())
    os.chmod(path, 0o666 & ~_umask())


def _fsync_dir(path: Path) -> None:
    with contextlib.suppress(OSError):
        fd = os.open(path, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)
