"""Files in and out: the input (read, schema), run folders (written atomically, read back,
explained, compared) and review tables.

* :mod:`~curate.io.read`: CSV or Parquet files, folders and globs; row ids;
* :mod:`~curate.io.schema`: column rules or a pandera model, every failure collected;
* :mod:`~curate.io.folder`: the run folder's files;
* :mod:`~curate.io.outputs`: the one all-or-nothing writer, which checks the output path
  before the work (:mod:`~curate.io.output_checks`), holds it exclusively
  (:mod:`~curate.io.output_lock`) and replaces recoverably (:mod:`~curate.io.output_swap`);
* :mod:`~curate.io.review`, :mod:`~curate.io.diff`, :mod:`~curate.io.explain`:
  a reviewer's CSV and protected ids, the diff of two runs, `curate why`.
"""
