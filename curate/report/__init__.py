"""The self-contained HTML report of a run (and of an evaluation): :mod:`~curate.report.html`
builds the page from :mod:`~curate.report.cells` (keyed cells, tables, sections), adds the
evaluation's part from :mod:`~curate.report.evaluation`, and :mod:`~curate.report.plots` draws
its pictures."""
