"""One run in memory: prepare the input, run the stages, audit and summarise.

* :mod:`~curate.pipeline.records`: the prepared input, each stage's outcome, the result;
* :mod:`~curate.pipeline.prepare`: read, validate and build the space, once;
* :mod:`~curate.pipeline.stage`: one stage step, shared by a run, `curate evaluate`
  and the Sampler;
* :mod:`~curate.pipeline.loop`: the stage loop;
* :mod:`~curate.pipeline.audit`, :mod:`~curate.pipeline.summary`: the audit table and summary.json.
"""
