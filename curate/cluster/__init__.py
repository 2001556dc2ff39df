"""The same stages on a Dask cluster.

* :mod:`~curate.cluster.session`: the connection for one run (Dask calls), installed
  as the neighbour engine's executor, and neighbour queries in blocks on the workers;
* :mod:`~curate.cluster.stage`: one stage's method with the cluster;
* :mod:`~curate.cluster.partitioned`: the stratified-partition logic, pure, no Dask.
"""
