"""Adaptive refinement: every step certified, the reported bracket the best of all
steps, the history honest (every step as it was)."""
import math

from solver.analysis import analyse
from solver.model import Analysis, Case, Footing, Ground, Layer

PRANDTL = 2.0 + math.pi  # Prandtl (1920): q_u / su for weightless Tresca soil


def prandtl(target_gap: float, max_steps: int) -> Case:
    return Case(title="adaptive Prandtl", footing=Footing(width=1.0), ground=Ground(),
                layers=(Layer("clay", "tresca", None, 0.0, undrained_strength=1.0),),
                analysis=Analysis(elements=500, target_gap=target_gap, max_steps=max_steps, time_limit_s=120))


def test_adaptive_history_is_complete_and_the_bracket_is_the_best_of_all_steps():
    result = analyse(prandtl(target_gap=1e-4, max_steps=3))  # unreachable target: runs every step
    history = result.adapt_history
    assert len(history) == 3 and history[-1]["stopped"] in ("step limit", "time limit")
    lowers = [row["lower"] for row in history if row["lower"] is not None]
    uppers = [row["upper"] for row in history if row["upper"] is not None]
    assert result.lower.pressure_kPa == max(lowers)
    assert result.upper.pressure_kPa == min(uppers)
    assert result.lower.certificate["passed"] and result.upper.certificate["passed"]
    assert result.lower.pressure_kPa <= PRANDTL * (1 + 1e-6) <= result.upper.pressure_kPa * (1 + 2e-6)
    # elements grow on the refined side
    assert history[1]["elements_upper"] > history[0]["elements_upper"]
    assert all(row["wall_s"] > 0 for row in history)
    assert "adapt_history" in result.to_dict()


def test_adaptive_stops_at_the_target_gap():
    result = analyse(prandtl(target_gap=0.2, max_steps=4))  # 20 %: met at the first step
    assert len(result.adapt_history) == 1
    assert result.adapt_history[0]["stopped"] == "target gap reached"
    assert result.gap_percent <= 20.0


def test_the_upper_bound_is_refined_first_then_the_lower_then_the_one_that_moved_more():
    from types import SimpleNamespace
    from solver.adapt import _next_to_refine
    kinds = ["lower", "upper"]
    moved = lambda lo, up: {"lower": SimpleNamespace(extra={"change_from_previous_step_kPa": lo}),
                            "upper": SimpleNamespace(extra={"change_from_previous_step_kPa": up})}
    assert _next_to_refine(kinds, moved(None, None), set()) == ["upper"]
    assert _next_to_refine(kinds, moved(None, -0.3), {"upper"}) == ["lower"]
    assert _next_to_refine(kinds, moved(0.01, -0.3), {"upper", "lower"}) == ["upper"]
    assert _next_to_refine(kinds, moved(0.5, -0.3), {"upper", "lower"}) == ["lower"]
    assert _next_to_refine(["lower"], moved(None, None), set()) == ["lower"]
