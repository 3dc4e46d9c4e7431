"""The catalogue: SQLAlchemy models, where the database lives, the unit of work, the
migration runner and the service functions the commands call.

Importing this package is cheap; sqlalchemy and alembic load with the submodules that need
them (``models``, ``engine``, ``migrate``, ``service``).
"""
