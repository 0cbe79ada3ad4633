"""Stellar parallax from an observatory's own astrometry: a year of a nearby star's positions
against its background gives its parallax, its proper motion and its distance in parsecs."""
