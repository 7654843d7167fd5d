"""``python -m hearnav`` runs the command line."""

import sys

from hearnav.cli import main

sys.exit(main())
