"""The ``gonogo`` command's entry point, kept outside the ``simulator`` package so that it loads at once.

Loading the command line (numpy, pandas, pydantic, rich, ...) takes a second or more. A Ctrl-C
(SIGINT) or SIGTERM in that time ends the command with one line and exit status 128 + the signal's
number, as later in a run, instead of a traceback from the middle of an import. Once loaded,
``simulator.cli`` handles stops itself, with the same :class:`Stopped` and :func:`stop_name`.
"""

from __future__ import annotations

import signal
import sys

__all__ = ["main", "Stopped", "raise_stopped", "stop_name"]


class Stopped(KeyboardInterrupt):
    """The command was asked to end by a signal; handled wherever Ctrl-C is."""

    def __init__(self, signum: int):
        super().__init__(signum)
        self.signum = signum


def raise_stopped(signum, frame) -> None:
    """A signal handler: the signal becomes :class:`Stopped` in the main thread."""
    raise Stopped(signum)


def stop_name(stop: BaseException) -> tuple[int, str]:
    """The signal behind a stop (a bare KeyboardInterrupt is Ctrl-C) and its name for a message."""
    signum = getattr(stop, "signum", signal.SIGINT)
    return signum, "Ctrl-C (SIGINT)" if signum == signal.SIGINT else signal.Signals(signum).name


def main() -> None:
    """Load the command line, then run it (``gonogo`` in a shell)."""
    # a signal ignored from the start (a background job of a script, nohup) stays ignored
    previous = {s: signal.signal(s, raise_stopped) for s in (signal.SIGINT, signal.SIGTERM)
                if signal.getsignal(s) is not signal.SIG_IGN}
    try:
        from simulator.cli import app
    except KeyboardInterrupt as stop:
        signum, name = stop_name(stop)
        sys.stderr.write(f"stopped by {name} while starting: nothing was done\n")
        raise SystemExit(128 + signum) from None
    for signum, handler in previous.items():
        signal.signal(signum, handler)
    app()


if __name__ == "__main__":
    main()
