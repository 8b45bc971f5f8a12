"""alembic's environment for the store: run on the connection (and in the transaction) that
:func:`harness.store.migrate.upgrade` hands over; never from a config file."""

from alembic import context

connection = context.config.attributes["connection"]
context.configure(connection=connection, target_metadata=None, transactional_ddl=True,
                  render_as_batch=connection.dialect.name == "sqlite")
with context.begin_transaction():
    context.run_migrations()
