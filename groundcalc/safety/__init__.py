"""IEEE Std 80: tolerable limits, fault-current factors, closed-form checks and conductor sizing."""
