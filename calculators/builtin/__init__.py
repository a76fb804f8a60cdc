"""The built-in calculators, one module each (plus the optics helpers and the deep-sky catalogue they share)."""
