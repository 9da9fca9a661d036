"""The path of the light: interstellar dust and the Earth's atmosphere between a star and the eye."""
