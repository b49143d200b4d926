"""The rule registry: every rule's id, default severity, title, help and rationale.

One list used by the audit, settings validation (``rules_off``), SARIF rule metadata, the
Markdown checklist and the README's rule table (``tests/test_rules.py`` compares them).
Adding a rule: one module under :mod:`schemcheck.checks` and one entry here. Rule ids are
part of the interface: users' scripts and settings files name them. Imports nothing of ours.
"""

from __future__ import annotations

from dataclasses import dataclass

SEVERITIES = ("info", "warning", "error")


@dataclass(frozen=True, slots=True)
class Rule:
    """One rule: ``severity`` is the default; a finding may be raised lower (never higher)."""

    id: str
    severity: str
    title: str
    help: str
    rationale: str


_RULES = (
    Rule("no-bias-path", "error", "Input with no DC path for its bias current",
         "An op-amp input whose bias current has no DC path (reached only through capacitors "
         "or nothing): its output has no defined DC level.",
         "The bias current charges whatever sits on the input until the output rails."),
    Rule("no-dc-feedback", "error", "No DC feedback",
         "No DC path from the output back to the inverting input (an integrator without a DC "
         "feedback resistor): the DC gain is unbounded.",
         "Vos and Ib are integrated with no bound: the output drifts to a rail."),
    Rule("bias-resistor-mismatch", "warning", "Inputs see different DC resistances",
         "The resistance the + input sees differs from what the - input sees, so the bias "
         "currents leave an Ib x R error: a compensation resistor of the wrong value "
         "(warning), or resistance that could be added at either input or a lower source "
         "resistance (info). Every suggestion is checked by solving the changed network and "
         "states the worst case before and after; a resistor that is an input's only DC path "
         "is never suggested for removal.",
         "On bipolar inputs with matched bias currents, equal resistances cancel Ib down to "
         "Ios x R (common practice)."),
    Rule("bias-resistor-harmful", "warning", "Compensation resistor that adds error",
         "A bias-compensation resistor whose removal (a wire in its place) lowers the "
         "stage's worst case, solved again, as much as any other value would: on parts whose "
         "input currents do not track (an offset current near twice the bias current or "
         "more, as internally bias-cancelled and zero-drift parts may have) it cancels "
         "nothing and adds error.",
         "Cancellation needs Ib+ and Ib- of one sign and size; otherwise the resistor only "
         "adds its own Ib x R term and noise."),
    Rule("missing-parameters", "warning", "Op-amp with no DC parameters",
         "No Vos, Ib or Ios for an op-amp from its fields or the parts library: its error is "
         "unknown.",
         "Without the part's figures the stage's error cannot be budgeted."),
    Rule("over-budget", "error", "Stage over its DC error budget",
         "The worst-case output error over the temperature range exceeds the stage's budget.",
         "The budget is what the next stage or converter tolerates at this output."),
    Rule("unreadable-design", "error", "Design file that could not be read",
         "A design file could not be read: a malformed or unsupported file, or a missing "
         "child sheet; the rest of the batch is still audited.",
         "A design the tool cannot read has not been checked at all."),
    Rule("ambiguous-part-match", "warning", "Part number matched only ambiguously",
         "The op-amp's part number matches no parts-library entry exactly, and by its family "
         "(the part number without package, grade, temperature-range and reel suffixes) it "
         "could be several entries, or an entry of a different variant: none is used.",
         "Grades and variants of one family differ in their guaranteed figures; picking one "
         "would be a guess."),
    Rule("estimated-parameters", "warning", "Op-amp figures estimated by class",
         "Requested with --estimate-missing or estimate_missing: the op-amp's missing Vos, "
         "Ib, Ios or TCVos are filled from common practice orders of magnitude for its "
         "class of input stage.",
         "A class estimate is no datasheet figure: the budget it gives is an order of "
         "magnitude, to be confirmed."),
    Rule("unreadable-value", "warning", "Value that could not be read",
         "A resistor's or potentiometer's value is in no notation the tool reads, or is "
         "ambiguous (1m on a resistor: milli or mega?): every stage whose DC network runs "
         "through it is not analysed. Give the value in the settings (by reference, or a "
         "house notation for the whole project).",
         "A part opened or read in silence gives a confident wrong number or a false error."),
    Rule("dc-path-unknown", "warning", "Stage whose DC path runs through a part not modelled",
         "An input's DC bias or the DC feedback can only run through a part whose DC "
         "behaviour the tool does not model (a transistor, a diode, a switch or multiplexer, "
         "a connector or open jumper, an amplifier that is not analysed): the stage is not "
         "analysed.",
         "Taking such a part as open would report a missing path the drawing may well have."),
    Rule("open-loop", "warning", "Amplifier with no feedback at all",
         "Nothing leads from the output back to the - input, not even a capacitor: an "
         "open-loop use, not analysed as a gain stage. An op-amp used so as a comparator, "
         "both inputs on DC paths, is info; an amplifier of unknown kind drawn like an "
         "op-amp (it may have internal gain), or one with an input on no DC path, a "
         "warning.",
         "An op-amp symbol with no feedback path is almost always a comparator use or a "
         "fixed-gain part, not a missing resistor."),
    Rule("comparator-symbol", "warning", "Comparator symbol wired as an op-amp",
         "A part drawn with a comparator symbol (open-collector output) is wired with "
         "negative DC feedback, as a follower or a gain stage: it is analysed as an op-amp, "
         "and either the symbol is wrong or the circuit will not work as drawn.",
         "Comparators are not compensated for negative feedback and their open-collector "
         "outputs need a pull-up: the drawing and the part disagree."),
    Rule("audit-failed", "error", "Design whose audit stopped on an internal error",
         "The audit of a design stopped on an unexpected error of the tool (not of the "
         "design's files): that design is reported unchecked, the rest of the batch is still "
         "audited.",
         "A design the tool could not finish auditing has not been checked at all; the error "
         "is the tool's to fix, and the file shows how to reproduce it."),
    Rule("outputs-tied", "error", "Two outputs driving one net",
         "Two outputs drive one net: op-amp outputs, or an op-amp output and an integrated "
         "circuit's output pin. They fight each other; the stages driving the net have no "
         "defined output and the stages it feeds are marked so. The rest of the design is "
         "still solved.",
         "Push-pull outputs shorted together draw a large current and leave the net at "
         "whichever wins."),
    Rule("hold-droop", "warning", "Sample-and-hold input: bias current droop",
         "An input held by a capacitor behind an analog switch (a sample-and-hold) has no DC "
         "path while the switch is open: its bias current discharges the hold capacitor. "
         "The finding gives the droop rate Ib/C in V/s and the droop over the stated hold "
         "time (setting hold_time); a resistor to ground would destroy the hold.",
         "The droop dV/dt = Ib/C sets how long a value may be held (capacitor law, i = C "
         "dV/dt)."),
    Rule("spare-inputs-floating", "warning", "Spare amplifier with floating inputs",
         "A spare amplifier unit (its output reaches nothing) whose inputs float. A spare "
         "tied off as a follower or with its inputs on rails is neither a stage nor a "
         "finding.",
         "A floating spare may oscillate or sit at a rail and draw supply current (common "
         "practice: tie it off as a follower with its + input inside the input range)."),
    Rule("high-bias-resistance", "warning", "Bias current through a large resistance",
         "A bipolar input's bias current flows through a resistance over 1 MΩ, and the "
         "bias-current terms alone use most of the stage's budget (warning) or, without a "
         "budget, most of its worst case (info): the finding names the resistor and its "
         "Ib x R.",
         "Ib x R grows with R: above about 1 MΩ a bipolar input's bias current dominates "
         "(common practice)."),
    Rule("stage-unsolvable", "warning", "Stage whose DC network has no single solution",
         "The stage's DC network could not be solved (its equations have no single "
         "solution: inputs on one net, a loop of op-amps with nothing to set its level): "
         "the stage is not analysed and the finding says what was seen.",
         "A stage is never left without figures in silence."),
)

RULES: dict[str, Rule] = {rule.id: rule for rule in _RULES}


def rule(rule_id: str) -> Rule:
    """The registered rule ``rule_id``; KeyError names an id nobody registered."""
    return RULES[rule_id]


def markdown_table() -> str:
    """The README's rule table (``tests/test_rules.py`` checks the README holds it)."""
    rows = ["| rule | default severity | what it means |", "|---|---|---|"]
    rows += [f"| `{r.id}` | {r.severity} | {r.help} |" for r in RULES.values()]
    return "\n".join(rows)
