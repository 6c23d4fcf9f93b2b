"""Stage 7 -- interfaces: command line, demo, plots; translation only, no mathematics."""
