"""The ``hrstage`` command.

Subcommands::

    hrstage classify INPUT -o OUTPUT      tag a catalogue with stages (streams big files)
    hrstage plot INPUT -o FIGURE           HR diagram of a catalogue (tagged or not)
    hrstage check-types INPUT             compare catalogued MK types with the HR positions
    hrstage explain --teff T --lum L      why one star gets its label
    hrstage boundaries -o TABLE           export the stage boundaries at a metallicity
    hrstage demo --out DIR                run the bundled invented demo catalogue

Exit status: 0 success; 130 interrupted by Ctrl-C (nothing written, an earlier output left as it
was); 141 standard output closed by its reader (``| head``), quietly; 1 the run failed (a bug or a system problem such as a full disk: one line
on standard error, ``--traceback`` shows the details); 2 a user mistake (bad option, missing or
malformed file, columns that do not fit): one line ``hrstage: error: ...`` and nothing written.
"""

from __future__ import annotations

import sys

from .commands import build_parser, run

__all__ = ["main", "build_parser"]


def main(argv=None) -> int:
    """Run the command line; returns the exit status (0 ok, 1 failure, 2 user mistake,
    130 interrupted, 141 standard output closed).

    Without ``argv`` (the ``hrstage`` command itself) a Ctrl-C after the run has ended is ignored:
    the process is only exiting, and its status must stay the run's.
    """
    if argv is not None:
        return run(list(argv))
    code = run(sys.argv[1:])
    import signal
    import threading

    if threading.current_thread() is threading.main_thread():
        signal.signal(signal.SIGINT, signal.SIG_IGN)
    if code == 130:
        # A KeyboardInterrupt that passed through C code run by an import (pandas, imported by
        # pyarrow) can leave CPython's "unhandled interrupt" mark set, and the interpreter would
        # then end itself by SIGINT whatever status we return: the run is over and cleaned up
        # (temporary files removed, threads and workers stopped), so leave with ours.
        import os

        for stream in (sys.stdout, sys.stderr):
            try:
                stream.flush()
            except (OSError, ValueError):
                pass
        os._exit(code)
    return code
