"""Fixtures of the cluster tests (curate/cluster): a real Dask LocalCluster started by
cluster_fixtures.local_cluster, and bundled open data written as CSV."""
