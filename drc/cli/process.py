"""The process the command line owns: its streams, signals, environment and folder.

`drc.cli.parser.main` runs every command inside `owned_process()`, which
makes the hostile corners of a process plain messages and documented exit
statuses instead of internal errors or silent losses:

- standard output closed (`>&-`) is refused at the start; a write that fails
  (a full device, a file-size limit, a reader that went away: `| head -1`)
  becomes one message and exit status 2, never a report that looks complete;
  what is still buffered then goes to the null device, so the interpreter's
  last flush cannot fail again;
- characters the output encoding lacks (`PYTHONIOENCODING=ascii`, Latin-1)
  print as plain ASCII through drc.atomic's "drc-plain" error handler;
- SIGTERM and SIGHUP end the run like Ctrl-C does: the exception unwinds
  through drc.atomic, which removes its temporary file and leaves the old
  report whole, and the process exits 128 + the signal's number;
- `COLUMNS` that is not a positive width is ignored, and `NO_COLOR` wins over
  `FORCE_COLOR` / `TTY_COMPATIBLE`;
- a working folder that was deleted is refused at the start;
- a Python warning (numpy's floating-point ones) prints as one plain line.

Everything is restored on the way out, so tests may call `main` in-process.
The Python API (drc.pipeline) touches none of this.
"""

from __future__ import annotations

import io
import os
import signal
import sys
import warnings
from collections.abc import Iterator
from contextlib import contextmanager, suppress
from typing import Any, TextIO, cast

from drc.atomic import PLAIN_ERRORS, write_all
from drc.errors import DrcError, UsageError

# Widths above this are not a terminal (and would make every line that long).
MAX_COLUMNS = 10_000
# Variables that force colour or terminal features on in rich, which NO_COLOR overrides.
_FORCING = ("FORCE_COLOR", "TTY_COMPATIBLE", "CLICOLOR_FORCE")
_ENDING_SIGNALS = tuple(getattr(signal, name) for name in ("SIGTERM", "SIGHUP") if hasattr(signal, name))


class Terminated(BaseException):  # noqa: N818 - named like KeyboardInterrupt, its sibling
    """The process was asked to end (SIGTERM, SIGHUP). A BaseException, like
    KeyboardInterrupt, so that no `except Exception` swallows it on the way out."""

    def __init__(self, signum: int) -> None:
        super().__init__(signum)
        self.signum = signum

    @property
    def name(self) -> str:
        return signal.Signals(self.signum).name

    @property
    def status(self) -> int:
        return 128 + self.signum  # as shells report a process ended by that signal


class OutputError(DrcError):
    """Standard output could not take the report (exit status 2)."""


def _why(exc: OSError) -> str:
    if isinstance(exc, BrokenPipeError):
        return "the program reading it stopped early (broken pipe)"
    return exc.strerror or str(exc)


def _failure(exc: OSError) -> OutputError:
    return OutputError(f"drc: cannot write to standard output: {_why(exc)}; "
                       "the report is incomplete")


class _GuardedStream:
    """Standard output whose write failures are OutputErrors naming the cause.

    Text goes to the descriptor directly, every byte accounted for: Python's
    buffered writer drops the rest of a partial write (a file-size limit
    lets the first write through in part, then refuses) without an error.
    A stream without a descriptor (a test's capture) is written as it is.
    """

    def __init__(self, stream: TextIO) -> None:
        self._stream = stream
        try:
            self._fd: int | None = stream.fileno()
        except (OSError, ValueError, AttributeError, io.UnsupportedOperation):
            self._fd = None

    def write(self, text: str) -> int:
        try:
            if self._fd is None:
                return self._stream.write(text)
            self._stream.flush()  # whatever was written through the stream itself comes first
            if os.linesep != "\n":
                text = text.replace("\n", os.linesep)
            write_all(self._fd, text.encode(self._stream.encoding or "utf-8", PLAIN_ERRORS))
            return len(text)
        except OSError as exc:
            raise _failure(exc) from None

    def write_utf8(self, data: bytes) -> bool:
        """Write UTF-8 text already encoded (a large report: no text copy of it), where the
        stream writes UTF-8 to a descriptor with "\n" line ends; False (nothing written)
        elsewhere, for the caller to write text."""
        encoding = (self._stream.encoding or "utf-8").replace("_", "-").lower()
        if self._fd is None or os.linesep != "\n" or encoding not in ("utf-8", "utf8"):
            return False
        try:
            self._stream.flush()
            write_all(self._fd, data)
            return True
        except OSError as exc:
            raise _failure(exc) from None

    def flush(self) -> None:
        try:
            self._stream.flush()
        except OSError as exc:
            raise _failure(exc) from None

    def __getattr__(self, name: str) -> Any:
        return getattr(self._stream, name)


def flush_stdout() -> None:
    """Push out what standard output still buffers (an OutputError if it cannot)."""
    if sys.stdout is not None:
        sys.stdout.flush()


def discard_stdout() -> None:
    """After a failed write: send what is still buffered to the null device, so the
    interpreter's flush at exit neither fails nor prints a second complaint."""
    stream = sys.stdout
    try:
        fd = stream.fileno() if stream is not None else None
    except (OSError, ValueError, AttributeError):
        fd = None
    if fd is None:
        return
    with suppress(OSError):
        null = os.open(os.devnull, os.O_WRONLY)
        os.dup2(null, fd)
        os.close(null)


def _raise_terminated(signum: int, _frame: object) -> None:
    for other in _ENDING_SIGNALS:  # a second signal must not interrupt the clean-up
        signal.signal(other, signal.SIG_IGN)
    raise Terminated(signum)


@contextmanager
def _signals() -> Iterator[None]:
    if sys.platform == "win32" or not _main_thread():
        yield
        return
    previous = {signum: signal.signal(signum, _raise_terminated) for signum in _ENDING_SIGNALS}
    try:
        yield
    finally:
        for signum, handler in previous.items():
            signal.signal(signum, handler)


def _main_thread() -> bool:
    import threading
    return threading.current_thread() is threading.main_thread()


@contextmanager
def _streams() -> Iterator[None]:
    if sys.stdout is None:
        raise UsageError("drc: standard output is closed; nowhere to print the report "
                         "(redirect it to a file or to /dev/null instead)")
    reconfigured: list[tuple[Any, str | None]] = []
    for stream in (sys.stdout, sys.stderr):
        reconfigure = getattr(stream, "reconfigure", None)
        if reconfigure is not None and stream.errors != PLAIN_ERRORS:
            reconfigured.append((reconfigure, stream.errors))
            reconfigure(errors=PLAIN_ERRORS)
    original = sys.stdout
    sys.stdout = cast(TextIO, _GuardedStream(original))
    try:
        yield
    finally:
        sys.stdout = original
        for reconfigure, errors in reconfigured:
            with suppress(OSError, ValueError):
                reconfigure(errors=errors)


@contextmanager
def _environment() -> Iterator[None]:
    saved = dict(os.environ)
    columns = os.environ.get("COLUMNS")
    if columns is not None and not (columns.isdigit() and 0 < int(columns) <= MAX_COLUMNS):
        del os.environ["COLUMNS"]  # COLUMNS=0 would print an empty report
    if os.environ.get("NO_COLOR"):
        for name in _FORCING:
            os.environ.pop(name, None)
    try:
        yield
    finally:
        os.environ.clear()
        os.environ.update(saved)


def check_working_folder() -> None:
    try:
        os.getcwd()
    except FileNotFoundError:
        raise UsageError("drc: the working folder no longer exists (was it deleted?); "
                         "change to an existing folder and run again") from None


def _show_plainly(message: Warning | str, category: type[Warning], filename: str, lineno: int,
                  file: TextIO | None = None, line: str | None = None) -> None:
    """A warning as one plain line (numpy's name a file and a line of our source)."""
    what = ("a numerical problem in the analysis" if issubclass(category, RuntimeWarning)
            else category.__name__)
    text = f"drc: warning: {what} ({message}); check the values of the parts involved\n"
    stream = file or sys.stderr
    if stream is not None:
        with suppress(OSError, ValueError):
            stream.write(text)


@contextmanager
def _plain_warnings() -> Iterator[None]:
    """Values are checked before the analysis sees them (drc.units.EVALUABLE), so a
    floating-point warning should not happen; if one does, it is said plainly, once."""
    with warnings.catch_warnings():
        warnings.showwarning = _show_plainly
        yield


@contextmanager
def owned_process() -> Iterator[None]:
    """Streams guarded, ending signals caught, environment tidied, for one command."""
    with _streams(), _signals(), _environment(), _plain_warnings():
        check_working_folder()
        yield
