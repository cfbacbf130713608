"""``python -m trialkit`` runs the command line."""

import sys

from trialkit.cli import main

sys.exit(main())
