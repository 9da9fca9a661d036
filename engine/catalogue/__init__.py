"""Catalogues: reading, colouring and writing star tables in streamed chunks, the
interpolation grid over the render path, and the Dask engine."""
