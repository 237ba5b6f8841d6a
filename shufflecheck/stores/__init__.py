"""Embedded stores (beside :mod:`shufflecheck.records`; reached only from
:mod:`shufflecheck.analyses`).

* :mod:`~shufflecheck.stores.monitor_store` -- the monitoring store: one SQLite file
  holding, per table or machine, the per-deck summaries the battery needs, the monitoring
  state and the SHA-256 and row range of every ingested file (schema in docs/monitoring.md).
"""

from __future__ import annotations

from shufflecheck.stores.monitor_store import SCHEMA_VERSION, BlockRows, MonitorStore, TableRow

__all__ = ["SCHEMA_VERSION", "BlockRows", "MonitorStore", "TableRow"]
