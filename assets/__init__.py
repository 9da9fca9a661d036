"""Invented demo data shipped with Starkiln (fictional cluster, fictional dome projector)."""

from importlib.resources import files


def asset_path(name: str):
    """Path of a shipped asset file (``importlib.resources``)."""
    return files(__name__) / name
