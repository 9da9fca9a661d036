"""Invented demo data shipped with Starkiln (fictional cluster, fictional dome projector).

Besides the demo data: ``photometry.npz``, the published filter curves and the CALSPEC Vega
spectrum that synthetic photometry needs (a cache of public reference data, like the CIE
tables; ``photometry_sources.json`` says where each array came from).
"""

from importlib.resources import files


def asset_path(name: str):
    """Path of a shipped asset file (``importlib.resources``)."""
    return files(__name__) / name
