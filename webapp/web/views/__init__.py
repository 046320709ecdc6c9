"""The screens: one module and one blueprint per screen. A view parses the request (forms/),
calls a service or a store function, and renders a template (charts/ builds its figures)."""
