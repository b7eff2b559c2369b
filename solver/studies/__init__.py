"""Studies on one case: variants side by side (:mod:`.compare`), specifications
(:mod:`.specifications`), sweeps (:mod:`.sweeps`), the cleaning ranking (:mod:`.cleaning`) and
the clean case against the fouled one (:mod:`.clean_vs_fouled`)."""

from .clean_vs_fouled import FOULING_TABLES, FoulingComparison, compare_clean_and_fouled, comparison_text
from .cleaning import cleaning_ranking
from .compare import Comparison, compare, key_outputs, metric, study_text, try_scenario
from .specifications import (SpecificationResult, adjust_changes, solve_specification, solve_specifications,
                             specification_table)
from .sweeps import run_sweep

__all__ = ["FOULING_TABLES", "FoulingComparison", "compare_clean_and_fouled", "comparison_text", "cleaning_ranking",
           "Comparison", "compare", "key_outputs", "metric", "study_text", "try_scenario", "SpecificationResult",
           "adjust_changes", "solve_specification", "solve_specifications", "specification_table", "run_sweep"]
