"""The service layer: read the store, run the analysis, shape the result.

Screens and the CLI parse their input, call a service and render what it returns. Services
import the core, the parsers and the store; never ``webapp.web`` or ``webapp.cli``, so they
run without a Flask app (the CLI's export and demo, a notebook).
"""
