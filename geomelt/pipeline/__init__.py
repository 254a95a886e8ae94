"""Run algorithms over the reference grid window by window; owns parallelism and memory bounds."""

from geomelt.pipeline.runner import OutputStats, RunPlan, RunResult, execute_run, plan_run

__all__ = ["OutputStats", "RunPlan", "RunResult", "execute_run", "plan_run"]
