"""The command line run in-process, and the check that it refused with one line."""

from __future__ import annotations

from model.cli import main


def run(argv, capsys):
    """Run the command line in-process; return (status, stdout, stderr)."""
    try:
        status = main([str(a) for a in argv])
    except SystemExit as exc:  # argparse errors
        status = exc.code
    out, err = capsys.readouterr()
    return status, out, err


def assert_one_line_error(status, err, *words):
    """Exit status 2 and one line on stderr, no traceback, naming each of ``words``."""
    assert status == 2, err
    lines = [line for line in err.splitlines() if line.strip()]
    assert len(lines) == 1, err
    assert "Traceback" not in err
    for word in words:
        assert word in lines[0], lines[0]
