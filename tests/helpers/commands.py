"""Many ``python -m narrator`` commands without paying the interpreter's start-up for each.

:class:`CommandServer` starts one Python interpreter (``sys.executable``) with the environment
the commands share, which imports ``narrator.cli`` once, as ``python -m narrator`` does
before it reads its arguments (``preload`` may name more modules, such as the report's
writer and figures, that a command would import later). Each command then runs in a child
forked from that interpreter: a process of its own, in its own working folder, with its own
environment, standard streams and exit status. The child runs ``narrator/__main__.py`` as
``__main__`` with ``sys.argv`` and ``sys.path[0]`` set as ``python -m narrator`` sets them,
and an exception that escapes is printed as the interpreter prints it (a traceback, exit 1).

What this does not prove, next to a fresh ``python -m narrator``: that the modules imported
before the fork import cleanly in the command's own environment (the interpreter's flags,
``PYTHONWARNINGS`` included, are the server's; :attr:`CommandServer.startup_stderr` holds
what the imports printed, and callers check it is empty). A command whose environment
matters at import time runs as a fresh process instead; tests/test_corpus.py also runs some
cases both ways and checks the outcomes are the same.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
import threading
from dataclasses import dataclass
from pathlib import Path
from typing import TextIO

_SERVER = r'''
import json, os, sys, time, traceback

requests = os.fdopen(os.dup(0), "r", encoding="utf-8")
replies = os.fdopen(os.dup(1), "w", encoding="utf-8")
null = os.open(os.devnull, os.O_RDONLY)
os.dup2(null, 0)
os.dup2(2, 1)  # anything printed while importing shows as start-up output, not as a reply

import narrator.cli  # what ``python -m narrator`` imports before it reads its arguments
for name in sys.argv[1:]:
    __import__(name)
MAIN = os.path.join(os.path.dirname(narrator.cli.__file__), "__main__.py")
sys.stderr.flush()
replies.write("ready\n")
replies.flush()


def child(request):
    os.chdir(request["cwd"])
    os.environ.clear()
    os.environ.update(request["env"])
    for fd, path in ((1, request["stdout"]), (2, request["stderr"])):
        target = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o600)
        os.dup2(target, fd)
        os.close(target)
    sys.argv = [MAIN, *request["args"]]
    sys.path[0] = os.getcwd()  # ``python -m`` puts the working folder first
    code = 0
    try:
        import runpy
        runpy.run_module("narrator", run_name="__main__", alter_sys=True)
    except SystemExit as exit:
        if exit.code is None:
            code = 0
        elif isinstance(exit.code, int):
            code = exit.code
        else:
            print(exit.code, file=sys.stderr)
            code = 1
    except BaseException:
        traceback.print_exc()
        code = 1
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except Exception:
            pass
    os._exit(code & 0xFF)


for line in requests:
    request = json.loads(line)
    sys.stdout.flush()
    sys.stderr.flush()
    if "reap" in request:  # a child started earlier (and perhaps killed by the caller): its exit status
        pid = request["reap"]
    else:
        pid = os.fork()
        if pid == 0:
            try:
                child(request)
            finally:
                os._exit(1)
        if request.get("start"):  # the caller watches it and asks for its status later
            replies.write(json.dumps({"pid": pid}) + "\n")
            replies.flush()
            continue
    deadline = time.monotonic() + request["timeout"]
    while True:
        done, status = os.waitpid(pid, os.WNOHANG)
        if done:
            break
        if time.monotonic() > deadline:
            os.kill(pid, 9)
            os.waitpid(pid, 0)
            status = None
            break
        time.sleep(0.005)
    if status is None:
        reply = {"returncode": None}
    elif os.WIFSIGNALED(status):
        reply = {"returncode": -os.WTERMSIG(status)}
    else:
        reply = {"returncode": os.WEXITSTATUS(status)}
    replies.write(json.dumps(reply) + "\n")
    replies.flush()
'''


@dataclass(frozen=True)
class Completed:
    """What a command left: its exit status and both streams (as ``subprocess.run`` reports them)."""

    returncode: int
    stdout: str
    stderr: str


@dataclass(frozen=True)
class Started:
    """A command started by :meth:`CommandServer.start`: its process id and the reading end of its stderr."""

    pid: int
    stderr: TextIO


class CommandServer:
    """One pre-imported interpreter that runs ``python -m narrator`` commands in forked children.

    Commands sent from several threads run one at a time; start one server per worker thread to
    run them side by side. ``env`` is the environment the interpreter starts with (each command
    may pass its own; what Python reads at start-up, such as ``PYTHONWARNINGS``, is this one's).
    """

    def __init__(self, env: dict[str, str], preload: tuple[str, ...] = ()):
        self._folder = Path(tempfile.mkdtemp(prefix="narrator-commands-"))
        self._startup = self._folder / "startup.txt"
        self._env = dict(env)
        self._lock = threading.Lock()
        self._count = 0
        with open(self._startup, "w", encoding="utf-8") as startup:
            self._process = subprocess.Popen(
                [sys.executable, "-c", _SERVER, *preload], cwd=self._folder, env=self._env,
                stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=startup, text=True, encoding="utf-8",
            )
        ready = self._process.stdout.readline()
        if ready.strip() != "ready":
            self.close()
            raise RuntimeError("the command server did not start: " + self.startup_stderr)

    @property
    def startup_stderr(self) -> str:
        """What the interpreter printed while importing narrator (a clean start prints nothing)."""
        return self._startup.read_text(encoding="utf-8", errors="replace")

    def run(self, args: list[str] | tuple[str, ...], cwd: Path | str, env: dict[str, str] | None = None,
            timeout: float = 300) -> Completed:
        with self._lock:
            self._count += 1
            out = self._folder / f"{self._count}.out"
            err = self._folder / f"{self._count}.err"
            request = {"args": [str(a) for a in args], "cwd": str(cwd), "env": dict(self._env if env is None else env),
                       "stdout": str(out), "stderr": str(err), "timeout": timeout}
            self._process.stdin.write(json.dumps(request) + "\n")
            self._process.stdin.flush()
            reply = self._process.stdout.readline()
            if not reply:
                raise RuntimeError("the command server stopped: " + self.startup_stderr)
            code = json.loads(reply)["returncode"]
            if code is None:
                raise subprocess.TimeoutExpired(["narrator", *request["args"]], timeout)
            # Decoded as subprocess.run(text=True) decodes: the locale's encoding, universal newlines.
            completed = Completed(code, out.read_text(), err.read_text())
            out.unlink()
            err.unlink()
            return completed

    def start(self, args: list[str] | tuple[str, ...], cwd: Path | str, env: dict[str, str] | None = None) -> Started:
        """Start one command and return at once, as ``subprocess.Popen`` would, with its standard error as a
        pipe (a named pipe the child opens as its stderr): the caller reads it, may kill the child by its
        ``pid``, and must then call :meth:`reap`. Its standard output is discarded."""
        with self._lock:
            self._count += 1
            err = self._folder / f"{self._count}.err-pipe"
            os.mkfifo(err, 0o600)
            request = {"args": [str(a) for a in args], "cwd": str(cwd), "env": dict(self._env if env is None else env),
                       "stdout": os.devnull, "stderr": str(err), "start": True}
            self._process.stdin.write(json.dumps(request) + "\n")
            self._process.stdin.flush()
            reply = self._process.stdout.readline()
            if not reply:
                raise RuntimeError("the command server stopped: " + self.startup_stderr)
            pid = json.loads(reply)["pid"]
        stderr = open(err, encoding="utf-8")  # noqa: SIM115 (reap closes it); returns once the child has opened its end
        err.unlink()  # both ends are open: the name is no longer needed
        return Started(pid, stderr)

    def reap(self, started: Started, timeout: float = 300) -> int:
        """The exit status of a started command (negative: the signal that ended it), once it has ended."""
        with self._lock:
            self._process.stdin.write(json.dumps({"reap": started.pid, "timeout": timeout}) + "\n")
            self._process.stdin.flush()
            reply = self._process.stdout.readline()
            if not reply:
                raise RuntimeError("the command server stopped: " + self.startup_stderr)
        started.stderr.close()
        code = json.loads(reply)["returncode"]
        if code is None:
            raise subprocess.TimeoutExpired(["narrator", str(started.pid)], timeout)
        return code

    def close(self) -> None:
        if self._process.poll() is None:
            self._process.stdin.close()
            try:
                self._process.wait(timeout=30)
            except subprocess.TimeoutExpired:
                self._process.kill()
                self._process.wait()
        self._process.stdout.close()
        for path in self._folder.iterdir():
            path.unlink()
        self._folder.rmdir()

    def __enter__(self) -> CommandServer:
        return self

    def __exit__(self, *exc) -> None:
        self.close()
