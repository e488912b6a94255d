"""Planning a build: lens inventories, the design search, tolerance Monte Carlo."""
