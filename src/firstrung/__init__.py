"""firstrung: plan, check and reduce classical geometric-astronomy campaigns."""

__version__ = "0.1.0"
