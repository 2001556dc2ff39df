"""Files in and out: the input (read, schema), run folders (written atomically, read back,
explained, compared) and review tables.

* :mod:`~curate.io.read`: CSV or Parquet files, folders and globs; row ids;
* :mod:`~curate.io.schema`: column rules or a pandera model, every failure collected;
* :mod:`~curate.io.folder`: the run folder's files and the all-or-nothing writers;
* :mod:`~curate.io.review`, :mod:`~curate.io.diff`, :mod:`~curate.io.explain`:
  a reviewer's CSV and protected ids, the diff of two runs, `curate why`.
"""
