"""``python -m ftsource``: the command line."""

import sys

from ftsource.cli import main

sys.exit(main())
