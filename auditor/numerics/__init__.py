"""High-precision numerics for the dynamic pass: pure functions, no I/O."""
