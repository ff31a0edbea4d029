"""The ``hrstage`` command.

Subcommands::

    hrstage classify INPUT -o OUTPUT      tag a catalogue with stages (streams big files)
    hrstage plot INPUT -o FIGURE           HR diagram of a catalogue (tagged or not)
    hrstage check-types INPUT             compare catalogued MK types with the HR positions
    hrstage explain --teff T --lum L      why one star gets its label
    hrstage boundaries -o TABLE           export the stage boundaries at a metallicity
    hrstage demo --out DIR                run the bundled invented demo catalogue

Exit status: 0 success; 1 the run failed (a bug or a system problem such as a full disk: one line
on standard error, ``--traceback`` shows the details); 2 a user mistake (bad option, missing or
malformed file, columns that do not fit): one line ``hrstage: error: ...`` and nothing written.
"""

from __future__ import annotations

import sys

from .commands import build_parser, run

__all__ = ["main", "build_parser"]


def main(argv=None) -> int:
    """Run the command line; returns the exit status (0 ok, 1 failure, 2 user mistake)."""
    return run(sys.argv[1:] if argv is None else list(argv))
