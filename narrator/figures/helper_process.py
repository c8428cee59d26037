"""Figures drawn by a second process, so that loading the plotting library overlaps reading the data.

Importing the plotting library takes about as long as reading and describing a million values.
A report made from the command line therefore starts a helper process first (``python -m
narrator.figures.helper_process``), before it imports the engine and the phrase builders; the
helper loads :mod:`narrator.figures.charts` while this process imports, reads, describes and
words the report, then draws the figures this process asks for. On two cores this pays for an
input of any size: the plotting library's import is the longest single step of a small report. The figures are the same,
byte for byte, as :func:`narrator.figures.charts.render_figures` draws in this process (a test
checks it): the helper gets the findings (as the sidecar's JSON, which keeps every number exactly),
the figure texts, the locale, the audience (a memo's figures are drawn smaller), and the values and
rows as raw float64 and int64 bytes. Nothing is ever evaluated or unpickled: the request is JSON plus
two arrays of fixed types.

Whenever the helper cannot be used (no interpreter to start, it failed, it stopped, it sent
something unexpected) :meth:`DrawingHelper.render` returns None and the caller draws in this
process, where a real problem with the figures raises its usual message.

==============================  ====================================================
Name                            What it does
==============================  ====================================================
:class:`DrawingHelper`          the helper process: start, send, collect (or render), close
:func:`worth_a_helper`          whether a helper is started for an input (any file or folder there)
:func:`main`                    the helper's side (``python -m narrator.figures.helper_process``)
==============================  ====================================================

Message format, both ways: a 4-byte big-endian length, a UTF-8 JSON header of that length, then the
binary parts the header announces (byte counts in the header).
"""

from __future__ import annotations

import contextlib
import json
import os
import struct
import subprocess
import sys
import threading
from typing import IO, TYPE_CHECKING

from narrator.figures.rendered import RenderedFigure
from narrator.findings import Findings

if TYPE_CHECKING:
    from narrator.phrasing.narrative import Narrative
    from narrator.reading.sample import Sample

# numpy is imported where the arrays are made, not here: the command starts the helper before it has
# imported numpy, and the helper's own first import is the plotting library, which needs it anyway.

FROM_FINDINGS_ALONE = frozenset({"histogram"})  # figures drawn without the values themselves
_LENGTH = struct.Struct(">I")
_MAX_HEADER = 64 << 20


def worth_a_helper(path: str | os.PathLike[str]) -> bool:
    """Whether a helper is started for the input: for any file or folder that is there, whatever its size.

    Measured as a whole command (tests/benchmarks/bench_report.py, README there): with the helper's
    imports kept to the figures, a report on 1,000 values takes less time with a helper than without,
    though both processes start Python and numpy. A missing path (the command is about to say so) is not.
    """
    try:
        return os.path.exists(path)
    except (ValueError, TypeError):
        return False


class DrawingHelper:
    """A helper process that draws a report's figures; see the module's description."""

    def __init__(self, process: subprocess.Popen) -> None:
        self._process = process
        self._wanted: list[str] = []
        self._sender: threading.Thread | None = None

    @classmethod
    def start(cls) -> DrawingHelper | None:
        """Start the helper; None when no helper can be started here (the caller then draws itself)."""
        if not sys.executable:
            return None
        try:
            process = subprocess.Popen(
                [sys.executable, "-m", "narrator.figures.helper_process"],
                stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.DEVNULL,
                env=_helper_environment(),
            )
        except OSError:
            return None
        return cls(process)

    def send(self, findings: Findings, sample: Sample, narrative: Narrative, *, locale: str) -> None:
        """Ask for the figures ``narrative`` wants; :meth:`collect` returns them. This process goes on meanwhile."""
        process = self._process
        if process is None:
            return
        import numpy as np

        self._wanted = [t.key for t in narrative.figures]
        try:
            # Only the figures that draw values need them; the histogram is drawn from the findings alone.
            needs_values = any(key not in FROM_FINDINGS_ALONE for key in self._wanted)
            values = np.ascontiguousarray(sample.values, dtype="<f8").tobytes() if needs_values else b""
            rows = np.ascontiguousarray(sample.rows, dtype="<i8").tobytes() if needs_values else b""
            header = {
                "findings": findings.to_dict(),
                "figures": [{"key": t.key, "caption": t.caption, "alt_text": t.alt_text, "labels": dict(t.labels)}
                            for t in narrative.figures],
                "locale": locale,
                "audience": narrative.audience,
                "name": sample.name,
                "values": len(values),
                "rows": len(rows),
            }
            encoded = _encode(header)
        except (ValueError, TypeError):
            self.close()
            return
        # The helper reads once it has loaded the plotting library; a thread hands the request
        # over meanwhile, so this process does not wait on the pipe.
        self._sender = threading.Thread(target=_hand_over, args=(process.stdin, encoded, values, rows), daemon=True)
        self._sender.start()

    def collect(self) -> list[RenderedFigure] | None:
        """The figures asked for by :meth:`send`; None if the helper could not draw them."""
        process, self._process = self._process, None
        if process is None:
            return None
        try:
            if self._sender is not None:
                self._sender.join()
            reply = _read_header(process.stdout)
            if reply is None or "error" in reply or not isinstance(reply.get("figures"), list):
                return None
            figures = []
            for item in reply["figures"]:
                png = _read_exactly(process.stdout, int(item["png"]))
                if png is None:
                    return None
                figures.append(RenderedFigure(key=str(item["key"]), png=png, width_px=int(item["width_px"]),
                                              height_px=int(item["height_px"]), caption=str(item["caption"]),
                                              alt_text=str(item["alt_text"])))
            return figures if [f.key for f in figures] == self._wanted else None
        except (OSError, ValueError, KeyError, TypeError):
            return None
        finally:
            _finish(process)

    def render(self, findings: Findings, sample: Sample, narrative: Narrative, *, locale: str
               ) -> list[RenderedFigure] | None:
        """:meth:`send` then :meth:`collect`."""
        self.send(findings, sample, narrative, locale=locale)
        return self.collect()

    def close(self) -> None:
        """Stop the helper if it was never asked to draw (it has nothing to finish: no wait for its imports)."""
        process, self._process = self._process, None
        if process is not None:
            if self._sender is None:
                with contextlib.suppress(OSError):
                    process.terminate()
            _finish(process)

    def __enter__(self) -> DrawingHelper:
        return self

    def __exit__(self, *exc_info) -> None:
        self.close()


def _helper_environment() -> dict[str, str]:
    """This environment, with this copy of narrator first on the helper's path and not the working folder."""
    import narrator

    package_root = os.path.dirname(os.path.dirname(os.path.abspath(narrator.__file__)))
    path = os.environ.get("PYTHONPATH")
    return {**os.environ, "PYTHONSAFEPATH": "1",
            "PYTHONPATH": package_root if not path else package_root + os.pathsep + path}


def _finish(process: subprocess.Popen) -> None:
    for stream in (process.stdin, process.stdout):
        if stream is not None:
            with contextlib.suppress(OSError):
                stream.close()
    try:
        process.wait(timeout=10)
    except subprocess.TimeoutExpired:
        process.kill()
        process.wait()


def _encode(header: dict) -> bytes:
    encoded = json.dumps(header, ensure_ascii=False, allow_nan=False).encode("utf-8")
    return _LENGTH.pack(len(encoded)) + encoded


def _write(stream: IO[bytes], header: dict, *parts: bytes) -> None:
    stream.write(_encode(header))
    for part in parts:
        stream.write(part)
    stream.flush()


def _hand_over(stream: IO[bytes], encoded: bytes, *parts: bytes) -> None:
    """Write a request and close the pipe; a helper that stopped early is noticed by :meth:`collect`."""
    with contextlib.suppress(OSError, ValueError):
        stream.write(encoded)
        for part in parts:
            stream.write(part)
        stream.close()


def _read_exactly(stream: IO[bytes], size: int) -> bytes | None:
    chunks, left = [], size
    while left > 0:
        chunk = stream.read(left)
        if not chunk:
            return None
        chunks.append(chunk)
        left -= len(chunk)
    return b"".join(chunks)


def _read_header(stream: IO[bytes]) -> dict | None:
    prefix = _read_exactly(stream, _LENGTH.size)
    if prefix is None:
        return None
    (size,) = _LENGTH.unpack(prefix)
    if size > _MAX_HEADER:
        return None
    body = _read_exactly(stream, size)
    if body is None:
        return None
    header = json.loads(body.decode("utf-8"))
    return header if isinstance(header, dict) else None


def _serve(source: IO[bytes], sink: IO[bytes]) -> None:
    """Read one request from ``source``, draw it, and write the figures (or an error) to ``sink``."""
    import numpy as np

    from narrator.figures.charts import render_figures  # the slow import, done while the caller reads its data
    from narrator.phrasing.narrative import FigureText
    from narrator.reading.sample import Sample

    request = _read_header(source)
    if request is None:
        return  # the caller did not need figures after all
    values = np.frombuffer(_read_exactly(source, int(request["values"])) or b"", dtype="<f8")
    rows = np.frombuffer(_read_exactly(source, int(request["rows"])) or b"", dtype="<i8")
    findings = Findings.from_dict(request["findings"])
    texts = tuple(FigureText(key=t["key"], caption=t["caption"], alt_text=t["alt_text"], labels=dict(t["labels"]))
                  for t in request["figures"])
    sample = Sample(values=values.astype(np.float64), rows=rows.astype(np.int64), name=str(request["name"]))
    figures = render_figures(findings, sample, _Figures(texts, str(request["audience"])), locale=str(request["locale"]))
    items = [{"key": f.key, "width_px": f.width_px, "height_px": f.height_px, "caption": f.caption,
              "alt_text": f.alt_text, "png": len(f.png)} for f in figures]
    _write(sink, {"figures": items}, *(f.png for f in figures))


class _Figures:
    """The parts of a Narrative that drawing reads: its figure texts and its audience (the figures' size)."""

    __slots__ = ("audience", "figures")

    def __init__(self, figures, audience: str) -> None:
        self.figures = figures
        self.audience = audience


def main() -> int:
    """The helper's side: serve one request on standard input and output, then stop."""
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)  # the caller handles Ctrl-C and closes the pipe
    try:
        _serve(sys.stdin.buffer, sys.stdout.buffer)
    except Exception as exc:  # any failure: say so; the caller then draws itself and reports properly
        with contextlib.suppress(OSError):
            _write(sys.stdout.buffer, {"error": type(exc).__name__})
        return 1
    # The reply is out; skip the interpreter's tidy-up of the plotting library (a tenth of a
    # second the caller would otherwise wait for). Nothing is left to flush or close.
    os._exit(0)


if __name__ == "__main__":
    raise SystemExit(main())
