"""Data the window draws (spectral band colours, Planckian locus, spectrum curves, demo sky),
computed through the render path in pure numpy so it is tested without a display."""
