"""Fixtures of the command-line tests (curate/cli): exit codes and printed text are the
contract of README.md; files written are read back with polars. The shared
pipeline-file fixtures (make_pipeline, two_blobs) are in tests/conftest.py."""
