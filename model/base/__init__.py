"""The base every layer stands on: errors, units, reading a user's file, names loaded on first use."""
