"""The command line: ``gas-ledger`` and its sub-commands, and the demo-data generator."""

from model.cli.main import build_parser, main

__all__ = ["build_parser", "main"]
