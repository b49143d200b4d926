"""One module per rule; each returns every Finding it sees (none stops at the first).

The rules' ids, severities and help live in :mod:`schemcheck.rules`.
"""

from __future__ import annotations

from schemcheck.checks.bias_path import check_bias_path
from schemcheck.checks.bias_resistance import check_bias_resistance
from schemcheck.checks.bias_resistor import check_bias_resistor
from schemcheck.checks.estimates import check_estimates
from schemcheck.checks.feedback import check_feedback
from schemcheck.checks.outputs_tied import check_outputs_tied
from schemcheck.checks.over_budget import check_budget
from schemcheck.checks.parameters import check_parameters
from schemcheck.checks.part_match import check_part_match
from schemcheck.checks.spare_units import check_spare_units
from schemcheck.checks.unsolvable import check_unsolvable
from schemcheck.rules import RULES

__all__ = ["RULES", "check_bias_path", "check_bias_resistance", "check_bias_resistor",
           "check_budget", "check_estimates", "check_feedback", "check_outputs_tied",
           "check_parameters", "check_part_match", "check_spare_units", "check_unsolvable"]
