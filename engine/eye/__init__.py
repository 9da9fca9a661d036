"""The eye at night: magnitudes to illuminance, the CIE 191 mesopic cone weight,
desaturation, intensity curves and dome compensation."""
