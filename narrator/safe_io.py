"""Safe output: nothing the user has is lost, and a report and its sidecar are one build's pair.

=============================  ===============================================
Name                           What it does
=============================  ===============================================
:func:`atomic_write_bytes`     write one file through a temporary file + rename
:func:`atomic_write_text`      the same for text (UTF-8)
:func:`refuse_same_file`       raise when an output path is one of the inputs
:func:`check_output`           the output rules for a report (see below)
:func:`is_narrator_report`     whether a file is a report narrator wrote
:func:`output_lock`            the advisory lock a build holds on its output
:func:`commit_report_pair`     write a report and its sidecar as one pair
:func:`read_report_pair`       the sidecar of the pair beside a report, checked
:func:`clean_stale`            finish or remove what a killed build left
:func:`sidecar_path`           where the findings sidecar of a report goes
:func:`pause`                  test hook: stop at one of :data:`PAUSE_POINTS`
:data:`REPORT_MARK`            the custom document property narrator's reports carry
:data:`REPORT_HASH_KEY`        the sidecar key holding its report's SHA-256
=============================  ===============================================

**One file** is written to a temporary file in the target folder, flushed and
synced to disk, then moved over the target with :func:`os.replace`, which
POSIX and Windows both perform as one step inside a folder. A crash, a full
disk or a kill at any moment leaves either the old file or the new one. The
rename replaces a symbolic link itself, never the file it points to: no writer
in narrator writes through a link.

**A report and its sidecar** are two files, so they are committed as a pair:
both are written to temporary files first; the sidecar records the SHA-256 of
its report (``report_sha256``); the report is renamed into place, then the
sidecar. A reader (:func:`read_report_pair`) accepts a sidecar only when the
report beside it has that SHA-256. A kill between the two renames leaves the
new report and the new sidecar's complete temporary file, whose hash matches:
the reader takes it, and the next build renames it into place. Any other
mismatch (a report edited or replaced by hand) makes the reader ignore the
pair and say so. A build holds an advisory lock on its output
(``.<report>.narrator-lock`` beside it, removed afterwards), so a second build
of the same output waits for the first, up to :data:`LOCK_WAIT_SECONDS`, then
refuses with one line. Each build first cleans what a killed build of the same
output left behind (its temporary files).

**Output rules** (:func:`check_output`): a report's name ends in ``.docx``;
it is not a folder, not an input of the build (followed through links and
hard links), and its sidecar is not one either; and an existing file is
replaced only when it is a report narrator wrote (it carries the custom
document property :data:`REPORT_MARK`) or the caller gave consent
(``--force``). The sidecar's name is narrator's (``<report>.findings.json``)
and is replaced as part of the pair; a file there with no report beside it is replaced only when
it reads as a findings file (:func:`looks_like_sidecar`) or with ``--force``.
"""

from __future__ import annotations

import contextlib
import errno
import hashlib
import json
import os
import re
import secrets
import sys
import tempfile
import time
import zipfile
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from narrator.errors import NarratorError

__all__ = [
    "LOCK_WAIT_SECONDS",
    "PAUSE_ENV",
    "PAUSE_POINTS",
    "REPORT_HASH_KEY",
    "REPORT_MARK",
    "REPORT_WORDS",
    "PairReading",
    "atomic_write_bytes",
    "atomic_write_text",
    "check_output",
    "clean_stale",
    "commit_report_pair",
    "is_narrator_report",
    "output_lock",
    "pause",
    "read_report_pair",
    "refuse_same_file",
    "sidecar_path",
]

# Tests set this to one of PAUSE_POINTS: the build says "paused at <point>" on stderr and waits
# there, so a kill can be aimed at that moment.
PAUSE_ENV = "NARRATOR_TEST_PAUSE_AT"
PAUSE_POINTS = (
    "locked",  # the output's lock is taken
    "cleaned",  # what a killed build left is cleaned
    "previous-read",  # the previous pair is read
    "report-temp-partial",  # half the report is in its temporary file
    "report-temp-written",  # the report's temporary file is complete and synced
    "sidecar-temp-partial",
    "sidecar-temp-written",
    "report-committed",  # the report is renamed into place, the sidecar not yet
    "sidecar-committed",  # both are in place, the folder not yet synced
    "folder-synced",  # the pair is on disk; the lock is not yet released
)
REPORT_HASH_KEY = "report_sha256"
REPORT_MARK = "narrator-report"  # the name of the custom document property every report carries
REPORT_WORDS = "narrator-words"  # the custom property holding the fingerprint of the words a report was written with
LOCK_WAIT_SECONDS = 60.0
_TEMP_TAG = ".narrator-"
_TEMP_SUFFIX = ".tmp"
_LOCK_SUFFIX = ".narrator-lock"


def pause(point: str) -> None:
    """At the point :data:`PAUSE_ENV` names, say so on stderr and wait (tests only; a kill ends it)."""
    if os.environ.get(PAUSE_ENV) != point:
        return
    sys.stderr.write(f"paused at {point}\n")
    sys.stderr.flush()
    time.sleep(600)


def _shown(path: Path) -> str:
    from narrator.reading.files import shown_name

    return shown_name(str(path), 120)


def _folder_of(target: Path) -> Path:
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        what = "is a file, not a folder" if folder.exists() else "does not exist"
        raise NarratorError(f"cannot write {_shown(target)}: folder {_shown(folder)} {what}")
    return folder


def _temp_file(target: Path):
    folder = _folder_of(target)
    name = f".{target.name}{_TEMP_TAG}{secrets.token_hex(6)}{_TEMP_SUFFIX}"
    try:
        descriptor = os.open(folder / name, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    except OSError as exc:
        raise NarratorError(f"cannot write {_shown(target)}: {exc.strerror or exc}") from None
    return folder / name, os.fdopen(descriptor, "wb")


def _write_temp(target: Path, data: bytes, partial_point: str | None = None,
                written_point: str | None = None) -> Path:
    """``data`` in a new, synced temporary file beside ``target``; its path."""
    temp_path, handle = _temp_file(target)
    try:
        with handle:
            half = len(data) // 2
            handle.write(data[:half])
            if partial_point:
                handle.flush()
                pause(partial_point)
            handle.write(data[half:])
            handle.flush()
            os.fsync(handle.fileno())
        _keep_mode_of_existing(target, temp_path)
        if written_point:
            pause(written_point)
    except BaseException as exc:
        with contextlib.suppress(OSError):
            temp_path.unlink()
        if isinstance(exc, OSError):
            raise NarratorError(f"cannot write {_shown(target)}: {exc.strerror or exc}") from None
        raise
    return temp_path


def _replace(temp_path: Path, target: Path) -> None:
    try:
        os.replace(temp_path, target)  # replaces a link itself, never the file it points to
    except OSError as exc:
        with contextlib.suppress(OSError):
            temp_path.unlink()
        raise NarratorError(f"cannot write {_shown(target)}: {exc.strerror or exc}") from None


def atomic_write_bytes(path: str | os.PathLike[str], data: bytes) -> None:
    """Replace ``path`` with ``data`` in one step (see the module notes); the folder must exist."""
    target = Path(path)
    temp_path = _write_temp(target, data)
    _replace(temp_path, target)
    _sync_folder(target.parent if str(target.parent) else Path("."))


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
                f"refusing to write {_shown(out_path)}: it is the input file {_shown(in_path)}; choose another "
                "output name"
            )


def _custom_properties_text(path: str | os.PathLike[str]) -> str | None:
    try:
        with zipfile.ZipFile(path) as package:
            member = package.getinfo("docProps/custom.xml")
            if member.file_size > 1 << 20:
                return None
            return package.read(member).decode("utf-8", "replace")
    except (OSError, KeyError, zipfile.BadZipFile, zipfile.LargeZipFile, ValueError, EOFError, NotImplementedError,
            RuntimeError):
        return None


def is_narrator_report(path: str | os.PathLike[str]) -> bool:
    """Whether ``path`` is a Word file narrator wrote: its custom properties carry :data:`REPORT_MARK`."""
    text = _custom_properties_text(path)
    return text is not None and re.search(rf'name="{re.escape(REPORT_MARK)}"', text) is not None


def edited_since_written(path: str | os.PathLike[str]) -> bool:
    """Whether the words of narrator's report at ``path`` differ from those it was written with
    (:data:`REPORT_WORDS`; :func:`narrator.wordtext.body_fingerprint`). A word processor saving it again
    is not an edit; a changed word, a picture swapped or a comment added is. A report from before the
    fingerprint was recorded, or one whose body cannot be read, counts as not edited (nothing to compare)."""
    text = _custom_properties_text(path)
    if text is None:
        return False
    found = re.search(rf'name="{re.escape(REPORT_WORDS)}"[^>]*>\s*<vt:lpwstr>([0-9a-f]{{64}})</vt:lpwstr>', text)
    if found is None:
        return False
    from narrator.wordtext import body_fingerprint

    now = body_fingerprint(path)
    return now is not None and now != found.group(1)


def sidecar_path(report_path: str | os.PathLike[str]) -> Path:
    """Where the findings sidecar of a report goes: beside it, its suffix replaced.

    >>> sidecar_path("out/waits.docx").as_posix()
    'out/waits.findings.json'
    """
    return Path(report_path).with_suffix(".findings.json")


def check_output(report: str | os.PathLike[str], *, protect: Sequence[str | os.PathLike[str] | None] = (),
                 force: bool = False) -> Path:
    """The report path, checked by the output rules of the module notes; NarratorError otherwise.

    ``protect`` names the build's inputs (data file, template, recipe); ``force`` is the
    caller's consent to replace an existing file that is not a narrator report.
    """
    target = Path(report)
    shown = _shown(target)
    if target.name.lower().endswith(".findings.json"):
        raise NarratorError(f"refusing to write the report to {shown}: that name is for the findings sidecar")
    if target.suffix.lower() != ".docx":
        raise NarratorError(f"refusing to write the report to {shown}: a report's name must end in .docx")
    if target.is_dir():
        raise NarratorError(f"cannot write the report to {shown}: it is a folder")
    refuse_same_file(target, *protect)
    refuse_same_file(sidecar_path(target), *protect)
    if target.exists() and not target.is_symlink() and not force and not is_narrator_report(target):
        raise NarratorError(f"{shown} exists and is not a report narrator wrote; choose another name, or add "
                            "--force to replace it")
    if target.exists() and not target.is_symlink() and not force and edited_since_written(target):
        raise NarratorError(f"{shown} was edited after narrator wrote it, and a new build would lose those "
                            "edits; choose another name, or add --force to replace it (to keep your own words "
                            "in a document narrator updates, see `narrator fill`)")
    side = sidecar_path(target)
    if side.exists() and not side.is_symlink() and not force and not side.is_dir() \
            and not (target.exists() and not target.is_symlink()) and not looks_like_sidecar(side):
        # No report of narrator's beside it: the file at the sidecar's name is someone else's.
        raise NarratorError(f"{_shown(side)} exists and is not a findings file narrator wrote, and the report "
                            f"{shown} is not there; choose another report name, or add --force to replace it")
    return target


def looks_like_sidecar(path: str | os.PathLike[str]) -> bool:
    """Whether ``path`` reads as a findings file narrator wrote, even a damaged one: its text opens a
    JSON object that names ``schema_version`` near its start (narrator writes that key first)."""
    try:
        with open(path, "rb") as handle:
            head = handle.read(4096)
    except OSError:
        return False
    text = head.decode("utf-8", "replace").lstrip("\ufeff \t\r\n")
    return text.startswith("{") and '"schema_version"' in text[:200]


# --------------------------------------------------------------------------- the lock

_HELD: dict[str, int] = {}  # lock files this process holds -> nesting depth


def _lock_path(report: Path) -> Path:
    return report.parent / f".{report.name}{_LOCK_SUFFIX}"


def _try_lock(descriptor: int) -> bool:
    try:
        import fcntl
    except ImportError:  # Windows: lock the first byte of the lock file
        import msvcrt

        try:
            msvcrt.locking(descriptor, msvcrt.LK_NBLCK, 1)
            return True
        except OSError:
            return False
    try:
        fcntl.flock(descriptor, fcntl.LOCK_EX | fcntl.LOCK_NB)
        return True
    except OSError as exc:
        if exc.errno in (errno.EAGAIN, errno.EACCES, errno.EWOULDBLOCK):
            return False
        raise


@contextlib.contextmanager
def output_lock(report: str | os.PathLike[str], *, wait: float = LOCK_WAIT_SECONDS) -> Iterator[None]:
    """Hold the advisory lock on ``report``'s output for the block; nested uses in one process share it.

    Another build holding it makes this wait up to ``wait`` seconds, then raise one line.
    The lock file is removed on release (after checking it is still the file locked, so a
    build that waited on a removed file tries again on the new one).
    """
    target = Path(report)
    lock = _lock_path(target)
    key = os.path.abspath(lock)
    if key in _HELD:
        _HELD[key] += 1
        try:
            yield
        finally:
            _HELD[key] -= 1
        return
    _folder_of(target)
    deadline = time.monotonic() + wait
    while True:
        try:
            descriptor = os.open(lock, os.O_RDWR | os.O_CREAT, 0o644)
        except OSError as exc:
            raise NarratorError(f"cannot write {_shown(target)}: {exc.strerror or exc}") from None
        if _try_lock(descriptor):
            try:
                same = os.path.samestat(os.fstat(descriptor), os.stat(lock))
            except FileNotFoundError:
                same = False
            if same:
                break
        os.close(descriptor)
        if time.monotonic() >= deadline:
            raise NarratorError(f"{_shown(target)}: another narrator build is writing this report; try again "
                                "when it has finished")
        time.sleep(0.1)
    _HELD[key] = 1
    try:
        pause("locked")
        yield
    finally:
        del _HELD[key]
        with contextlib.suppress(OSError):
            os.unlink(lock)
        os.close(descriptor)


# --------------------------------------------------------------------------- the pair


def _temp_files_of(target: Path) -> list[Path]:
    """narrator's temporary files of ``target`` in its folder (this version's, and the older tempfile names)."""
    folder = target.parent if str(target.parent) else Path(".")
    older = re.compile(rf"\.{re.escape(target.name)}\.[a-z0-9_]{{8}}\.tmp")
    try:
        names = [entry.name for entry in os.scandir(folder)]
    except OSError:
        return []
    prefix = f".{target.name}{_TEMP_TAG}"
    return [folder / name for name in names
            if (name.startswith(prefix) and name.endswith(_TEMP_SUFFIX)) or older.fullmatch(name)]


def _sha256_of(path: Path) -> str | None:
    digest = hashlib.sha256()
    try:
        with open(path, "rb") as handle:
            for block in iter(lambda: handle.read(1 << 20), b""):
                digest.update(block)
    except OSError:
        return None
    return digest.hexdigest()


_SIDECAR_LIMIT = 256 << 20  # a sidecar larger than this is not narrator's


def _sidecar_data(path: Path) -> tuple[Any, str | None]:
    """(parsed JSON, None) or (None, why it cannot be read)."""
    try:
        if path.stat().st_size > _SIDECAR_LIMIT:
            return None, "it is far larger than a findings file"
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        return None, "it is missing"
    except (OSError, UnicodeDecodeError) as exc:
        return None, f"it cannot be read ({getattr(exc, 'strerror', None) or 'not UTF-8 text'})"
    try:
        return json.loads(text), None
    except RecursionError:
        return None, "it is nested too deeply"
    except ValueError as exc:  # JSONDecodeError, and integers too long to convert
        return None, f"it is not valid JSON ({' '.join(str(exc).split())[:80]})"


def _pending_sidecar(report: Path, report_hash: str | None) -> Path | None:
    """A complete temporary sidecar whose report is the one in place: the commit was cut between its renames."""
    if report_hash is None:
        return None
    for temp in sorted(_temp_files_of(sidecar_path(report))):
        data, problem = _sidecar_data(temp)
        if problem is None and isinstance(data, dict) and data.get(REPORT_HASH_KEY) == report_hash:
            return temp
    return None


@dataclass(frozen=True, slots=True)
class PairReading:
    """What :func:`read_report_pair` found beside a report.

    ``state``: ``"none"`` (no sidecar), ``"ok"`` (the pair matches; ``data`` is the sidecar's
    JSON), ``"mismatch"`` (the sidecar belongs to another report), ``"unreadable"`` (not a
    readable JSON object). ``note`` says why a pair was not taken, for one line to the user.
    """

    state: str
    data: Any = None
    note: str | None = None


def read_report_pair(report: str | os.PathLike[str]) -> PairReading:
    """The sidecar beside ``report`` when it is the report's own (see the module notes).

    A pair being committed at this moment is read again (a few tries), so a reader
    sees the old pair or the new one.
    """
    target = Path(report)
    sidecar = sidecar_path(target)
    name = _shown(Path(sidecar.name))
    reading = PairReading("none")
    for _attempt in range(3):
        if not sidecar.exists() and not _temp_files_of(sidecar):
            return PairReading("none")
        report_hash = _sha256_of(target)
        data, problem = _sidecar_data(sidecar) if sidecar.exists() else (None, "it is missing")
        if problem is None and not isinstance(data, dict):
            problem = "it is not a findings object"
        if problem is None:
            recorded = data.get(REPORT_HASH_KEY)
            if recorded is None or recorded == report_hash:
                # A sidecar without a hash is from before pairs were checked: taken as it is.
                return PairReading("ok", data)
        pending = _pending_sidecar(target, report_hash)
        if pending is not None:
            return PairReading("ok", _sidecar_data(pending)[0])
        if problem is not None:
            reading = PairReading("unreadable", None, f"the previous findings {name} were ignored: {problem}")
            if not sidecar.exists():
                return PairReading("none")
        else:
            reading = PairReading("mismatch", None, f"the previous findings {name} were ignored: they belong to "
                                                    f"another version of {_shown(Path(target.name))}")
        time.sleep(0.05)
    return reading


def clean_stale(report: str | os.PathLike[str]) -> None:
    """Finish or remove what a killed build of ``report`` left: call it holding :func:`output_lock`.

    A complete temporary sidecar whose report is in place is renamed into place (the commit
    was cut between its two renames); every other temporary file of the report or its
    sidecar is removed.
    """
    target = Path(report)
    sidecar = sidecar_path(target)
    pending = _pending_sidecar(target, _sha256_of(target)) if target.exists() else None
    current, _problem = _sidecar_data(sidecar) if sidecar.exists() else (None, None)
    if pending is not None and not (isinstance(current, dict)
                                    and current.get(REPORT_HASH_KEY) == _sha256_of(target)):
        with contextlib.suppress(NarratorError):
            _replace(pending, sidecar)
    for temp in _temp_files_of(target) + _temp_files_of(sidecar):
        with contextlib.suppress(OSError):
            temp.unlink()
    pause("cleaned")


def commit_report_pair(report: str | os.PathLike[str], report_bytes: bytes | None, sidecar: Mapping[str, Any], *,
                       protect: Sequence[str | os.PathLike[str] | None] = (), force: bool = False,
                       checked: bool = False) -> Path:
    """Write ``report_bytes`` to ``report`` and the JSON of ``sidecar`` beside it, as one pair; the sidecar's path.

    The sidecar gets :data:`REPORT_HASH_KEY`, the SHA-256 of ``report_bytes``. The output is
    checked (:func:`check_output`, with ``protect`` and ``force``) under the output's lock,
    which is taken here unless the caller holds it; ``checked=True`` says the caller has
    applied output rules of its own (``narrator fill`` writes the user's own document, which
    is not a report). ``report_bytes=None`` says the report on disk is already the one the
    sidecar describes: only the sidecar is written, with that file's hash. See the module
    notes for the order of the writes and what a reader sees at any moment.
    """
    target = Path(report)
    sidecar_file = sidecar_path(target)
    with output_lock(target):
        if not checked:
            check_output(target, protect=protect, force=force)
        record = dict(sidecar)
        record[REPORT_HASH_KEY] = (hashlib.sha256(report_bytes).hexdigest() if report_bytes is not None
                                   else _sha256_of(target))
        sidecar_bytes = (json.dumps(record, indent=2, ensure_ascii=False, allow_nan=False) + "\n").encode("utf-8")
        if report_bytes is None:
            sidecar_temp = _write_temp(sidecar_file, sidecar_bytes, "sidecar-temp-partial", "sidecar-temp-written")
            _replace(sidecar_temp, sidecar_file)
            pause("sidecar-committed")
            _sync_folder(target.parent if str(target.parent) else Path("."))
            return sidecar_file
        report_temp = _write_temp(target, report_bytes, "report-temp-partial", "report-temp-written")
        try:
            sidecar_temp = _write_temp(sidecar_file, sidecar_bytes, "sidecar-temp-partial", "sidecar-temp-written")
        except BaseException:
            with contextlib.suppress(OSError):
                report_temp.unlink()
            raise
        try:
            _replace(report_temp, target)
        except BaseException:
            with contextlib.suppress(OSError):
                sidecar_temp.unlink()
            raise
        pause("report-committed")
        # From here the sidecar's temporary file completes the pair: it is kept if its rename fails.
        try:
            os.replace(sidecar_temp, sidecar_file)
        except OSError as exc:
            raise NarratorError(f"cannot write {_shown(sidecar_file)}: {exc.strerror or exc}; the next build "
                                "completes the pair") from None
        pause("sidecar-committed")
        _sync_folder(target.parent if str(target.parent) else Path("."))
        pause("folder-synced")
    return sidecar_file


def _keep_mode_of_existing(target: Path, temp_path: Path) -> None:
    # A new file gets the usual owner-writes, all-read mode (reading the umask would mean
    # changing it, which is process-wide and not safe beside other threads); a replaced file
    # keeps its permissions. A link's target is not consulted: the link itself is replaced.
    try:
        mode = target.lstat().st_mode & 0o777 if not target.is_symlink() else 0o644
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


def temporary_folder(purpose: str) -> Path:
    """A folder of this user's in the system's temporary folder, made if needed (for caches)."""
    base = Path(tempfile.gettempdir()) / f"narrator-{purpose}-{os.getuid() if hasattr(os, 'getuid') else 'user'}"
    base.mkdir(mode=0o700, exist_ok=True)
    return base
