"""``python -m lintamp`` runs the command line."""

import sys

from lintamp.cli import main

sys.exit(main())
