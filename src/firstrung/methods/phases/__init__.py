"""The phases method."""
