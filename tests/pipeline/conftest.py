"""Fixtures of the pipeline tests (curate/pipeline, curate/spec.py, curate/sampler.py):
pipeline files, the stage loop's summary and the Sampler against imbalanced-learn."""
