"""Safe output: files are replaced whole or not at all.

=============================  ===============================================
Name                           What it does
=============================  ===============================================
:func:`atomic_write_bytes`     write bytes through a temporary file + rename
:func:`atomic_write_text`      the same for text (UTF-8)
:func:`refuse_same_file`       raise when an output path is one of the inputs
:func:`sidecar_path`           where the findings sidecar of a report goes
:data:`PAUSE_ENV`              test hook: seconds to pause before the rename
=============================  ===============================================

A report is written to a temporary file in the target folder, flushed and
synced to disk, then moved over the target with :func:`os.replace`, which POSIX
and Windows both perform as one step inside a folder. A crash, a full disk or
a kill at any moment therefore leaves either the old file or the new one,
never a half-written mix; on an error the temporary file is removed.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
import time
from pathlib import Path

from narrator.errors import NarratorError

# Tests set this to make a save pause after the temporary file is complete and
# before the rename, so a kill can be aimed at the most delicate moment.
PAUSE_ENV = "NARRATOR_TEST_PAUSE_BEFORE_REPLACE"


def atomic_write_bytes(path: str | os.PathLike[str], data: bytes) -> None:
    """Replace ``path`` with ``data`` in one step.

    The bytes go to ``<folder>/<name>.<random>.tmp``, are flushed and synced
    with :func:`os.fsync`, and the file is moved over ``path`` with
    :func:`os.replace`. If anything fails the temporary file is removed and the
    previous content of ``path`` is untouched. The folder must exist.
    """
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        what = "is a file, not a folder" if folder.exists() else "does not exist"
        raise NarratorError(f"cannot write {target}: folder {folder} {what}")
    try:
        handle = tempfile.NamedTemporaryFile(  # noqa: SIM115 - closed below, before the rename
            dir=folder, prefix=f".{target.name}.", suffix=".tmp", delete=False
        )
    except OSError as exc:
        raise NarratorError(f"cannot write {target}: {exc.strerror or exc}") from None
    temp_path = Path(handle.name)
    try:
        with handle:
            handle.write(data)
            handle.flush()
            os.fsync(handle.fileno())
        _pause_for_tests()
        _keep_mode_of_existing(target, temp_path)
        os.replace(temp_path, target)
    except BaseException as exc:
        with contextlib.suppress(OSError):
            temp_path.unlink()
        if isinstance(exc, OSError):
            raise NarratorError(f"cannot write {target}: {exc.strerror or exc}") from None
        raise
    _sync_folder(folder)


def atomic_write_text(path: str | os.PathLike[str], text: str) -> None:
    """:func:`atomic_write_bytes` for text, encoded as UTF-8 with the newlines as given."""
    atomic_write_bytes(path, text.encode("utf-8"))


def refuse_same_file(output: str | os.PathLike[str], *inputs: str | os.PathLike[str] | None) -> None:
    """Raise :class:`NarratorError` when ``output`` is the same file as one of ``inputs``.

    Compares resolved paths (symbolic links followed) and, when both exist,
    :func:`os.path.samefile`, which also catches hard links and case-folding
    file systems.
    """
    out_path = Path(output)
    for given in inputs:
        if given is None:
            continue
        in_path = Path(given)
        same = out_path.resolve() == in_path.resolve()
        if not same and out_path.exists() and in_path.exists():
            with contextlib.suppress(OSError):
                same = os.path.samefile(out_path, in_path)
        if same:
            raise NarratorError(
                f"refusing to write {out_path}: it is the input file {in_path}; choose another output name"
            )


def _pause_for_tests() -> None:
    seconds = os.environ.get(PAUSE_ENV)
    if seconds:
        try:
            time.sleep(float(seconds))
        except ValueError:
            raise NarratorError(f"{PAUSE_ENV} must be a number of seconds, not {seconds!r}") from None


def _keep_mode_of_existing(target: Path, temp_path: Path) -> None:
    # NamedTemporaryFile creates files readable by the owner only; a report
    # should keep the permissions of the file it replaces, or get the usual
    # owner-writes, all-read mode (reading the umask would mean changing it,
    # which is process-wide and not safe beside other threads).
    try:
        mode = target.stat().st_mode & 0o777
    except FileNotFoundError:
        mode = 0o644
    with contextlib.suppress(OSError):
        os.chmod(temp_path, mode)


def _sync_folder(folder: Path) -> None:
    # Sync the folder entry so the rename itself survives a power cut (POSIX);
    # Windows cannot open folders this way, and the rename is already done.
    if os.name != "posix":
        return
    with contextlib.suppress(OSError):
        descriptor = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(descriptor)
        finally:
            os.close(descriptor)


def sidecar_path(report_path: str | os.PathLike[str]) -> Path:
    """Where the findings sidecar of a report goes: beside it, its suffix replaced.

    >>> sidecar_path("out/waits.docx").as_posix()
    'out/waits.findings.json'
    """
    return Path(report_path).with_suffix(".findings.json")
