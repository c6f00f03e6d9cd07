"""A window of polls in an engineer's units: counter deltas, frames, rates, bit error bounds,
light against the module's thresholds, the PHY's facts, and numbers as they read."""
