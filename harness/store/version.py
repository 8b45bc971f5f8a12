"""The store's layout version: the number of the newest migration (see :mod:`harness.store.schema`).

Apart from the layout itself so that a reader can check a store's version without SQLAlchemy.
"""

SCHEMA_VERSION = 3
