"""Fixtures for the store tests: ``make_parsed`` and the review fixtures live in the shared
conftest (tests/conftest.py)."""
