"""ffwd benchmarks: print figures, never assert times (see docs/bench.md)."""
