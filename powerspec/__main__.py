"""``python -m powerspec`` runs the command line."""

import sys

from powerspec.interfaces.cli import main

sys.exit(main())
