"""Starkiln window (PySide6): views and controls over the engine's settings and render path.

This package draws; it computes no colour. Every colour comes from
:func:`engine.render.render`.
"""
