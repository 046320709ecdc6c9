"""The store: SQLAlchemy models and the functions that read and write them."""
