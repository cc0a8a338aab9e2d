"""cstable."""
