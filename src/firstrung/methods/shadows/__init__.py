"""The shadows method."""
