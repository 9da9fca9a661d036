"""Star plates: whole-sky and dome textures drawn from a catalogue.

Rooms: ``projection`` (sky directions to plate pixels: equirectangular, equidistant fisheye,
cube faces) and ``drawing`` (each star deposited as a Gaussian integrated exactly over the
pixels, energy kept).
"""
