"""Plain helpers the tests import (the fixtures live in the conftest.py files)."""

from pathlib import Path

#: The checkout: demo_data/, pages/, benchmarks/ are read from here.
ROOT = Path(__file__).resolve().parents[2]
