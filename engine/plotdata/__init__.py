"""Data the window draws, computed through the render path in pure numpy so it is tested without
a display: :mod:`.plots` (spectral band colours, Planckian locus, spectrum curves, the slider's
mired scale) and :mod:`.sky` (the demo cluster and its sky picture)."""
