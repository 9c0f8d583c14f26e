"""``python -m flowkit.cli`` runs the command line."""

import sys

from flowkit.cli import main

sys.exit(main())
