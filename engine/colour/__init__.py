"""The colour science: Planck spectra, CIE observers and their cached tables, whites and
chromatic adaptation, display primaries and transfer functions, gamut mapping."""
