"""The site file: which site (hospital, unit) each theatre belongs to, for reports by site.

Format of our own (documented in docs/report.md, "Site file"): a UTF-8 CSV with the header
``theatre,site`` and one theatre per line; lines starting with ``#`` and blank lines are
comments. Theatre names are matched to the records' ``theatre`` column ignoring case and
surrounding spaces::

    # Fernhollow General Hospital (invented): theatres by site
    theatre,site
    Alder,Main theatres
    Day Unit 1,Day surgery unit
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

from model.base.errors import InputError
from model.base.files import read_user_text

SITE_COLUMNS = ("theatre", "site")
#: Site names the report keeps for itself: "unassigned" (theatres the site file does not
#: name) and "no site" (purchases without a site); neither a site file nor a purchases
#: file may use them.
RESERVED_SITES = ("unassigned", "no site")
#: Largest site file read. [bytes] (a site file has one short line per theatre)
MAX_SITE_FILE_BYTES = 1_000_000


def parse_sites(text: str, where: str = "site file") -> dict[str, str]:
    """Read site-file text into a mapping theatre -> site.

    Parameters
    ----------
    text : str
        The file's text.
    where : str
        Name of the file, for messages.

    Returns
    -------
    dict
        Theatre name (as written) -> site name.

    Raises
    ------
    InputError
        Naming the file and line: a missing header, a line without both fields, an empty
        name, a site named as the report's own rows (``RESERVED_SITES``), or a theatre given
        twice with different sites.
    """
    lines = [
        (n, line)
        for n, line in enumerate(str(text).splitlines(), start=1)
        if line.strip() and not line.lstrip().startswith("#")
    ]
    if not lines:
        raise InputError(where, "the file", "no lines; expected a header 'theatre,site' and one theatre per line")
    n0, header = lines[0]
    cols = [c.strip().lower() for c in next(csv.reader(io.StringIO(header)))]
    if cols[:2] != list(SITE_COLUMNS) or len(cols) != 2:
        raise InputError(f"{where}, line {n0}", header.strip(), "expected the header 'theatre,site'")
    out: dict[str, str] = {}
    seen: dict[str, tuple[int, str]] = {}
    for n, line in lines[1:]:
        fields = next(csv.reader(io.StringIO(line)))
        if len(fields) != 2:
            raise InputError(f"{where}, line {n}", line.strip(), "expected two fields: theatre,site")
        theatre, site = (f.strip() for f in fields)
        if not theatre or not site:
            raise InputError(f"{where}, line {n}", line.strip(), "a theatre and a site, neither empty")
        if site.casefold() in RESERVED_SITES:
            raise InputError(
                f"{where}, line {n}",
                site,
                "the report keeps this name for itself ('unassigned': "
                "theatres the site file does not name; 'no site': purchases without one); "
                "choose another site name",
            )
        key = theatre.casefold()
        if key in seen and seen[key][1] != site:
            raise InputError(
                f"{where}, line {n}",
                theatre,
                f"this theatre is already given site '{seen[key][1]}' on line {seen[key][0]}",
            )
        seen[key] = (n, site)
        out[theatre] = site
    return out


def read_sites(path) -> dict[str, str]:
    """Read a site file from disk (see :func:`parse_sites`)."""
    p = Path(path)
    return parse_sites(read_user_text(p, "site", MAX_SITE_FILE_BYTES, "CSV", "utf-8-sig"), str(p))
