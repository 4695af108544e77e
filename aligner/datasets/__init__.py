"""Seeded generators of network pairs with known truth (for tests, benchmarks and the demo) and
the bundled demo scenarios."""
