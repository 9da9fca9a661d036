"""Where a star's temperature comes from: kelvin, Johnson B-V, Gaia BP-RP, spectral classes."""
