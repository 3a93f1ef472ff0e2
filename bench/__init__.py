"""`make bench`: the benchmark scripts (`python -m bench.run`)."""
