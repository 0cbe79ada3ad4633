"""The eclipse method."""
