"""Symbolic inverse dynamics: a sympy derivation emitted as C, the yardstick for ffwd's speed."""
