"""Production records: every checked unit kept in a SQL database (SQLite or PostgreSQL), and process
capability over them. See :mod:`benchnf.records.store` and :mod:`benchnf.records.capability`."""

from .capability import Capability, capability, capability_from
from .store import CheckRecord, LimitRow, RecordsError, Store, connect, records_url

__all__ = ["Capability", "capability", "capability_from", "CheckRecord", "LimitRow", "RecordsError", "Store",
           "connect", "records_url"]
