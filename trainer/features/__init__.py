"""Features computed from parsed sentences, and the lexicons they use."""
