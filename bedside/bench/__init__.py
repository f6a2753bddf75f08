"""Benchmarks of bedside (``bedside bench``): they run the engine over the simulator's
scenarios and benchmark data and print figures; nothing in the core imports them."""
