"""Performance bench: a synthetic lab and the timings of the engine, the read, a loop and the home page."""
