"""``python -m model``: the same command line as ``gas-ledger``."""

import sys

from .cli import main

sys.exit(main())
