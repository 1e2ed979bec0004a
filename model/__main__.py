"""``python -m model``: the same command line as ``gas-ledger``."""

import sys

from model.cli.main import main

sys.exit(main())
