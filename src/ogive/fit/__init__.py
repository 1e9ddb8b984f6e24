"""Models and comparisons computed from sketches alone (numpy, scipy; no file reading)."""
