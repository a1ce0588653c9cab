"""The exhaustive search: candidate stacks, proven bounds, resistor choice, ranking and the
engine that runs them, over a parts table from :mod:`selector.physics`."""
