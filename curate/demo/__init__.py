"""The invented pump-fleet demo: :mod:`~curate.demo.data` generates the readings (with
injected faults and their truth table), :mod:`~curate.demo.pumps` writes its pipeline, runs
it and scores the catch."""
