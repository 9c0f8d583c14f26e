"""``python -m flowkit`` runs the command line."""

import sys

from flowkit.cli import main

sys.exit(main())
