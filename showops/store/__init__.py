"""The store: every SQL statement of showops lives under this package.

``open_db(instance)`` opens (creating if needed) ``instance/showops.db`` with WAL,
foreign keys on, and every numbered migration applied. Each area keeps its tables
and queries in its own module (``store/<area>.py``) and its schema changes in
``store/schema_<area>.py``.
"""

from showops.store.db import DB_FILENAME, Migration, open_db, transaction

__all__ = ["DB_FILENAME", "Migration", "open_db", "transaction"]
