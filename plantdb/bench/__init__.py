"""The benchmark suite (`plantdb bench`, `make bench`): timings beside raw-SQL baselines."""
