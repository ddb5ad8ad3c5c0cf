"""``python -m afecheck``."""

import sys

from afecheck.cli import main

sys.exit(main())
