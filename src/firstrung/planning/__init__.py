"""Planning campaigns: which dates work at every site and what each observer will see."""

from .shadows import PlanSite, ShadowConstraints, ShadowPlan, plan_shadows, shadow_length_m

__all__ = ["PlanSite", "ShadowConstraints", "ShadowPlan", "plan_shadows", "shadow_length_m"]
