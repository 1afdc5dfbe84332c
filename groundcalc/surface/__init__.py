"""Earth-surface potential from the solved leakage currents, and the touch and step search."""
