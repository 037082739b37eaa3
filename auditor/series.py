"""Shared facts about series: accumulators, sign patterns, growth, known sums and rewrite texts.

The face the series rules import from; the work is done in the `series_*` modules.
"""
from __future__ import annotations

from auditor.series_growth import (
    bounded_below_x, factorial_weight, index_degree, is_integer_term, range_stop, smallest_term_stop,
)
from auditor.series_model import KNOWN, Recognised
from auditor.series_probe import recognise_array, recognise_generator, recognise_loop
from auditor.series_report import (
    MAGNITUDE, expressions_through, loop_rewrite, magnitude_reads_index, severity_for, summed_term, vector_alternates,
    vector_resolver,
)
from auditor.series_rewrite import DESCRIBED, fresh, guard_explicit, guard_recurrence, library_call, module_for, read_after
from auditor.series_signs import (
    Accumulation, accumulations, alternation, carried, contains_sign_power, index_names, is_negative_factor,
    is_sign_power, loop_statements, new_values, parity_sign, recurrence_ratio, sign_of, term_alternates,
    toggles_sign, updates, value_before,
)
from auditor.series_tables import Table, coefficient_table, grows_like_asymptotic
from auditor.series_terms import (
    Growth, exact_arithmetic, growth, in_loop_resolver, integer_names, positive_series, positive_sum_call, recurrence,
    subtracted_twin,
)

__all__ = [
    "Table", "carried", "expressions_through", "magnitude_reads_index", "vector_resolver", "exact_arithmetic", "coefficient_table", "grows_like_asymptotic", "DESCRIBED", "KNOWN", "MAGNITUDE", "loop_rewrite", "severity_for", "summed_term", "vector_alternates", "Accumulation", "Growth", "Recognised", "accumulations", "alternation",
    "bounded_below_x", "contains_sign_power", "factorial_weight", "fresh", "growth", "guard_explicit",
    "guard_recurrence", "in_loop_resolver", "index_degree", "index_names", "integer_names",
    "is_integer_term", "is_negative_factor", "is_sign_power", "library_call", "loop_statements",
    "module_for", "new_values", "parity_sign", "positive_series", "positive_sum_call", "range_stop",
    "read_after", "recognise_array", "recognise_generator", "recognise_loop", "recurrence",
    "recurrence_ratio", "sign_of", "smallest_term_stop", "subtracted_twin", "term_alternates",
    "toggles_sign", "updates", "value_before",
]
