"""From a campaign file to a result: read, validate, assemble, compute.

One module per job (``shadows``, and in later rungs eclipse, phases, check,
planning); they read files but never print and never write.
"""

from .shadows import ShadowRun, baseline_inputs, run_shadows, shadow_readings, site_inputs

__all__ = ["ShadowRun", "baseline_inputs", "run_shadows", "shadow_readings", "site_inputs"]
