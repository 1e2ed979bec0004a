"""The shared store: plans, scenarios, case mixes and reference overrides, every version kept.

:mod:`model.store.core` holds the one interface (:class:`Store`), :mod:`model.store.schema`
the tables, migrations and checks both databases share, :mod:`model.store.sqlite` and
:mod:`model.store.postgres` only what differs between the two databases;
:mod:`model.store.access` says who may change what, :mod:`model.store.changelog` the
change log of the reference values worked out from the saved versions.
"""

from model.store.core import Store
from model.store.schema import (
    KINDS,
    SCHEMA_VERSION,
    STORE_ENV,
    StoreError,
    Version,
    default_location,
    default_path,
    is_postgres_url,
)

__all__ = [
    "KINDS",
    "SCHEMA_VERSION",
    "STORE_ENV",
    "Store",
    "StoreError",
    "Version",
    "default_location",
    "default_path",
    "is_postgres_url",
]
