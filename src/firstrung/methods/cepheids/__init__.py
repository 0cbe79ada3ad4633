"""Cepheid distances: a few weeks of a Cepheid's photometry give its period and mean magnitude;
a published period-luminosity relation gives its absolute magnitude, and so its distance."""
