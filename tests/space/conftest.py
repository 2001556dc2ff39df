"""Fixtures of the space tests (curate/space): HEOM and HVDM as published (Wilson and
Martinez 1997) are written as plain loops in tests/mixed_definitions.py, shared with
the evaluation tests."""
