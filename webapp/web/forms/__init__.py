"""Request parsing and validation: what a reader typed, checked, with a message per field
that says what was expected."""
