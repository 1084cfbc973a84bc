"""Time–temperature superposition of sweeps at several temperatures into a master curve."""
