"""Fixtures of the demo tests (curate/demo): the invented pump-fleet generator is checked
against its own published specification (shares and ranges in curate.demo.data)."""
