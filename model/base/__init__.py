"""The base every layer stands on: errors, units, reading a user's file, spreadsheet-safe cells."""
