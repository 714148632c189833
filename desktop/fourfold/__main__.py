"""``python -m fourfold`` runs the same command line as the ``fourfold`` script."""

import sys

from fourfold.cli import main

sys.exit(main())
