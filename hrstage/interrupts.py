"""Ctrl-C on the command line: stop before any output is put in place, never half-way after.

A ``KeyboardInterrupt`` can be lost: raised inside an import that a library wraps in a catch-all
(pyarrow importing pandas), or inside a generator that is then left running. The command line
therefore remembers the request (:func:`catch_interrupts`), treats whatever error follows it as
the interrupt, and :func:`commit_section` - the rename that puts an output in place
(:mod:`hrstage.catalog.atomic`) - refuses to run after it. Once one output is in place, Ctrl-C is
ignored until the command has finished, so what it writes is complete. Layer 0: no imports of
ours beyond the standard library, so the handler is in place before anything heavy is imported.
"""

from __future__ import annotations

import contextlib
import signal
import threading


class _State:
    requested = False
    committed = False
    installed = False


def interrupt_requested() -> bool:
    """True once Ctrl-C was pressed during a command-line run (see :func:`catch_interrupts`)."""
    return _State.requested


def _on_sigint(signum, frame):
    if _State.committed:       # an output is in place: the run finishes what it started
        return
    _State.requested = True
    raise KeyboardInterrupt


def _note_sigint(signum, frame):
    _State.requested = True


@contextlib.contextmanager
def catch_interrupts():
    """SIGINT handling for one command-line run (main thread only; elsewhere nothing changes)."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    previous = signal.signal(signal.SIGINT, _on_sigint)
    _State.requested = _State.committed = False
    _State.installed = True
    try:
        yield
    finally:
        _State.installed = False
        signal.signal(signal.SIGINT, previous)


@contextlib.contextmanager
def commit_section():
    """Around the rename that puts an output in place: a Ctrl-C that came earlier cancels it
    (``KeyboardInterrupt``); one that arrives now only sets the flag, so it cannot land between
    the rename and the bookkeeping. Without :func:`catch_interrupts` (the Python interface)
    nothing changes."""
    main = _State.installed and threading.current_thread() is threading.main_thread()
    if main:
        signal.signal(signal.SIGINT, _note_sigint)
    try:
        if _State.requested:
            raise KeyboardInterrupt
        yield
        if main:
            _State.committed = True
    finally:
        if main:
            signal.signal(signal.SIGINT, _on_sigint)
