"""Catalogues: colouring every row of a star table through the render path.

Rooms: ``plan`` (what the columns mean, statuses), ``columns`` (cells to numbers,
schema checks), ``colouring`` (the per-chunk function), ``formats`` (formats,
input files, astropy readers and writers), ``streaming`` (pyarrow chunked reading
and writing), ``run`` (a run on this machine), ``dask_engine`` (a run on a Dask
cluster); the colour grid over the render path: ``colour_grid`` (the grid and its
lookup), ``grid_build`` (building it), ``grid_cache`` (keeping it).
"""
