"""Plan and depth geometry of the metal: repairs on reading, footprint, thin-wire segments."""
