"""What Starkiln writes: lookup textures, palettes and contact sheets, and the PNG / EXR files
that carry them."""
