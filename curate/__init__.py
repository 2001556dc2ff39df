"""curate."""
