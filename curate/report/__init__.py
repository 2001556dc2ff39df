"""The self-contained HTML report of a run (and of an evaluation): :mod:`~curate.report.html`
builds the page, :mod:`~curate.report.plots` draws its pictures."""
