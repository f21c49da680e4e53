"""Work over many takes: sweeps, batch plans and runners, presets per speaker."""
