"""``python -m hrstage.cli`` runs the ``hrstage`` command."""

import sys

from . import main

sys.exit(main())
