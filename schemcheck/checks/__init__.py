"""One module per rule; each returns every Finding it sees (none stops at the first).

Rule ids are part of the interface: ``no-bias-path``, ``no-dc-feedback``,
``bias-resistor-mismatch``, ``bias-resistor-harmful``, ``missing-parameters``,
``over-budget``.
"""

from __future__ import annotations

from .bias_path import check_bias_path
from .bias_resistor import check_bias_resistor
from .budget import check_budget
from .feedback import check_feedback
from .parameters import check_parameters

RULES = {
    "no-bias-path": "An op-amp input whose bias current has no DC path (reached only "
                    "through capacitors or nothing): its output has no defined DC level.",
    "no-dc-feedback": "No DC path from the output back to the inverting input (an "
                      "integrator without a DC feedback resistor): the DC gain is unbounded.",
    "bias-resistor-mismatch": "The resistance the + input sees differs from what the - input "
                              "sees, so the bias currents leave an Ib x R error; or adding a "
                              "compensation resistor would cut the error by more than half.",
    "bias-resistor-harmful": "A bias-compensation resistor on an op-amp whose bias currents are "
                             "not matched (FET/CMOS inputs, internally bias-cancelled parts): "
                             "it cancels nothing and adds error.",
    "missing-parameters": "No Vos, Ib or Ios for an op-amp from its fields or the parts "
                          "library: its error is unknown.",
    "over-budget": "The worst-case output error over the temperature range exceeds the "
                   "stage's budget.",
    "unreadable-design": "A design file could not be read: a malformed or unsupported file, "
                         "or a missing child sheet; the rest of the batch is still audited.",
}

__all__ = ["RULES", "check_bias_path", "check_bias_resistor", "check_budget", "check_feedback",
           "check_parameters"]
