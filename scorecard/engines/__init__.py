"""Where the passes over the rows run (in memory or on Dask), and the passes themselves."""
