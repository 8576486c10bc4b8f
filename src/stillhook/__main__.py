"""``python -m stillhook`` runs the CLI."""

import sys

from stillhook.cli import main

sys.exit(main())
