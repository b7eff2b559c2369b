"""Signals and a closed standard output for the ``hxtrain`` command (:mod:`.main`): SIGINT and
SIGTERM are noted and raised as KeyboardInterrupt and :class:`Terminated`, so that ``finally``
blocks run and temporary files go; a forked worker leaves quietly; an interrupt Python could not
pass on is delivered again; a reader that went away (``| head``) ends the output quietly.
Imports nothing beyond ``os`` and ``sys`` at module level, so that start-up stays light."""

from __future__ import annotations

import os
import sys

EXIT_INTERRUPTED, EXIT_BROKEN_PIPE, EXIT_TERMINATED = 130, 141, 143
"""128 + the signal's number, as a shell reports a process ended by SIGINT, SIGPIPE, SIGTERM."""


class Terminated(BaseException):
    """Raised by the SIGTERM handler :func:`main` installs, so that a SIGTERM unwinds like Ctrl-C:
    ``finally`` blocks run and temporary files are removed (not an Exception: no handler for
    errors catches it)."""


HANDLER_PROCESS: list = []
"""The process that set the signal handlers (forked workers inherit them)."""
SIGNALS_RECEIVED: list = []
"""SIGINT and SIGTERM caught while :func:`main` runs, in order. An error raised while one unwinds
the program (numpy turns an interrupt during its import into an ImportError) is reported as
that signal, never as a fault in hxtrain."""


def catch_signals() -> dict:
    """Note SIGINT and SIGTERM and raise KeyboardInterrupt and :class:`Terminated` for them;
    returns the handlers to restore. SIGINT is taken over only from Python's default handler
    (an ignored SIGINT, as in a background job, stays ignored); nothing is set where signals
    cannot be (not the main thread, or a platform without SIGTERM)."""
    import signal

    previous = {}
    HANDLER_PROCESS[:] = [os.getpid()]
    for name, handler in (("SIGINT", _interrupted), ("SIGTERM", _terminated)):
        number = getattr(signal, name, None)
        try:
            if number is None or (name == "SIGINT" and signal.getsignal(number) is not signal.default_int_handler):
                continue
            previous[number] = signal.signal(number, handler)
        except (ValueError, OSError):
            continue
    return previous


def stop_if_signalled():
    """Stop now if a signal was caught but its exception went nowhere: a C extension's module
    initialisation that runs Python code (numpy's, scipy's) can clear it, and the import goes on."""
    if SIGNALS_RECEIVED:
        raise Terminated() if is_sigterm(SIGNALS_RECEIVED[-1]) else KeyboardInterrupt()


def is_sigterm(number) -> bool:
    import signal

    return number == getattr(signal, "SIGTERM", None)


def _interrupted(signum, frame):
    _leave_quietly_if_worker(EXIT_INTERRUPTED)
    SIGNALS_RECEIVED.append(signum)
    raise KeyboardInterrupt


def _terminated(signum, frame):
    _leave_quietly_if_worker(EXIT_TERMINATED)
    SIGNALS_RECEIVED.append(signum)
    raise Terminated()


def _leave_quietly_if_worker(code):
    """In a worker process forked from the command (a batch split over processes), which
    inherits these handlers: end it without a traceback; the command itself, which gets the same
    Ctrl-C from the terminal, reports it once."""
    if HANDLER_PROCESS and os.getpid() != HANDLER_PROCESS[-1]:
        raise SystemExit(code)


def _interrupt_again(signum, handlers_in_place):
    """The signal once more, to the main thread, while :func:`main`'s handlers are in place."""
    import _thread

    if handlers_in_place():
        _thread.interrupt_main(signum)


def unraisable(hook, handlers_in_place, unraisable):
    """An interrupt raised where Python cannot pass it on (a weakref callback, a ``__del__``)
    would be lost, and printed as "Exception ignored in ...": deliver it to the main thread again
    instead, from another thread a moment later (from here it would be raised inside this hook
    and lost again); the handler then runs at the main thread's next ordinary step. Anything
    else goes to ``hook``, the hook in place before :func:`main`."""
    if isinstance(unraisable.exc_value, (KeyboardInterrupt, Terminated)) and SIGNALS_RECEIVED:
        import threading

        again = threading.Timer(0.01, _interrupt_again, (SIGNALS_RECEIVED[-1], handlers_in_place))
        again.daemon = True
        again.start()
        return
    hook(unraisable)


def restore_signals(previous):
    import signal

    for number, handler in (previous or {}).items():
        signal.signal(number, signal.SIG_DFL if handler is None else handler)


def stdout_gone() -> bool:
    """Flush the standard output; True when its reader has gone away (the rest is discarded)."""
    try:
        sys.stdout.flush()
    except BrokenPipeError:
        discard_stdout()
        return True
    return False


def discard_stdout():
    """Point the standard output at the null device, so that what is left in its buffer does not
    fail again when Python flushes it at exit (Python's documented treatment of a closed pipe)."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)
    except (AttributeError, OSError, ValueError):  # not a real file (a test's capture)
        pass
