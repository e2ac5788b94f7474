"""``python -m imputer_app`` runs the ``kinfill`` command line."""

import sys

from imputer_app.cli import main

sys.exit(main())
