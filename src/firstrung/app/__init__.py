"""Application layer: the check of every log, the ladder, the report, the demo."""
