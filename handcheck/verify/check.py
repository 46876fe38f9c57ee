"""Check every step of a worksheet: three exact evaluations and a verdict.

For each step (worksheet format 1, check output format 1):

- the *true value*: the declared ``quantity`` in the solved circuit or, without
  one, the step's formula evaluated on true inputs (true part values and the true
  values of earlier steps);
- the *recomputation*: the formula evaluated on the author's own claimed numbers of
  earlier steps, which separates an arithmetic slip from a conceptual error;
- the formula on true inputs compared with the quantity's true value, which tells a
  wrong formula.

From these: ``agrees``; ``arithmetic`` (the claim does not follow from the formula
and the author's earlier numbers); ``formula`` (right arithmetic, but the formula is
not the quantity); ``carried`` (right formula, right arithmetic, wrong inputs from an
earlier step, named in ``caused_by``); ``differs`` (no formula, wrong claim);
``unit`` (dimensions do not match); ``unchecked`` (nothing to check against).
"""

from __future__ import annotations

import dataclasses
from typing import Any

import sympy

from handcheck.circuit.build import build
from handcheck.circuit.kinds import KINDS
from handcheck.circuit.model import Circuit
from handcheck.errors import CircuitError, HandcheckError, TimeLimitError, UnitError, WorksheetError
from handcheck.solve.frequency import LIST_QUANTITIES
from handcheck.solve.phasor import Solution
from handcheck.solve.quantities import TIME_DOMAIN, Quantity, evaluate_quantity, evaluate_values, parse_quantity
from handcheck.solve.solutions import ExactSolutions
from handcheck.solve.timequantities import evaluate_time_quantity
from handcheck.verify.basis import formula_only_inputs_note, matching_quantities, settle, unit_kind
from handcheck.verify.carried import without_true_formula
from handcheck.verify.claims import Claim, Tolerance, agrees, read_claim, read_tolerance, relative_error, to_complex
from handcheck.verify.cycles import expected_text, measure_note
from handcheck.verify.findings import Diagnosis, Report, Shown, StepBase, StepFinding
from handcheck.verify.following import Following, follows, follows_note, root_cause, rounded
from handcheck.verify.harmonics import other_frequencies_note
from handcheck.verify.mistakes import Context, diagnose, worksheet_frequencies
from handcheck.verify.present import describe_frequency, format_value
from handcheck.verify.rebuild import Agreed
from handcheck.verify.responses import S_IN_FORMULAS, check_function_of_s, check_list
from handcheck.verify.rounding import Written
from handcheck.verify.safety import cautions
from handcheck.verify.waveform import check_waveform, comparison_span
from handcheck.worksheet.evaluate import Value, evaluate
from handcheck.worksheet.expr import Node, names_in, parse
from handcheck.worksheet.model import StepSpec, Worksheet
from handcheck.worksheet.units import DIMENSIONLESS, dim_of, suggest_for

__all__ = ["check", "part_environment"]


def part_environment(circuit: Circuit) -> dict[str, Value]:
    """The values a formula sees for part ids, ``f`` and ``w``."""
    env: dict[str, Value] = {
        "f": Value(circuit.frequency, dim_of("Hz")),
        "w": Value(circuit.omega, dim_of("Hz")),
    }
    for part in circuit.parts:
        unit = KINDS[part.kind].unit
        if part.source is not None:
            env[part.id] = Value(part.source.phasor(circuit.phasors, circuit.omega), dim_of(unit))
        elif unit:
            env[part.id] = Value(part.value, dim_of(unit))
        elif part.kind in ("vcvs", "cccs", "coupling", "transformer"):
            env[part.id] = Value(part.value, DIMENSIONLESS)
    return env


@dataclasses.dataclass(frozen=True)
class _Read:
    """A step as read: its spec, the fields every finding of it carries, its claim,
    tolerance and parsed formula (None without one)."""

    step: StepSpec
    base: StepBase
    claim: Claim
    tolerance: Tolerance
    tree: Node | None


def _unit_finding(read: _Read, shown: Shown, truth: Value, formula_true: Value | None) -> StepFinding | None:
    """The finding of a claim, or a formula, in other units than the truth (None when they match)."""
    claim, step = read.claim, read.step
    if claim.dim != truth.dim:
        what = "the quantity is in" if step.quantity else "the formula gives"
        meant = suggest_for(claim.unit_text, truth.dim)
        hint = f'; did you mean "{meant}"?' if meant else ""
        message = f"the claim is in {claim.dim or 'no unit'}, but {what} {truth.dim or 'no unit'}{hint}"
        return StepFinding(**read.base, **shown, verdict="unit", message=message)
    if formula_true is not None and formula_true.dim != truth.dim:
        message = f"the formula gives {formula_true.dim or 'no unit'}, but the quantity is in {truth.dim or 'no unit'}"
        return StepFinding(**read.base, **shown, verdict="unit", message=message)
    return None


class _Checker:
    def __init__(self, worksheet: Worksheet, circuit: Circuit, exact: ExactSolutions) -> None:
        self.worksheet = worksheet
        self.circuit = circuit
        self.exact = exact
        self.budget = exact.budget
        base = part_environment(circuit)
        self.true_env: dict[str, Value] = dict(base)
        self.claimed_env: dict[str, Value] = dict(base)
        # The author's numbers before rounding, as far as they can be known: the true
        # value where a claim agrees, the author's formula on these where it follows.
        self.full_env: dict[str, Value] = dict(base)
        self.findings: dict[str, StepFinding] = {}
        # each single-valued claim as written, carried forward as the interval it stands for
        self.written: dict[str, Written] = {}
        self.default_tolerance = read_tolerance(
            worksheet.tolerance, file=worksheet.path, line=worksheet.line_of("tolerance")
        )
        self.step_names = {step.name for step in worksheet.steps}
        self.function_steps: set[str] = set()
        self.names = set(base) | self.step_names
        self.frequencies = worksheet_frequencies(self.readable_quantities())
        self.steady_values: dict[str, Value | HandcheckError] = {}
        #: the steps so far whose claim agrees with their quantity (for the catalogue)
        self.agreed: list[Agreed] = []

    def readable_quantities(self) -> list[Quantity]:
        """Every step's quantity that parses (a step that does not reports it itself)."""
        found = []
        for step in self.worksheet.steps:
            if step.quantity:
                try:
                    found.append(parse_quantity(step.quantity))
                except HandcheckError:
                    continue
        return found

    @property
    def transient(self) -> Any:
        """The closed-form complete response (computed on first use)."""
        return self.exact.transient

    def check_response(self, read: _Read, quantity: Quantity) -> StepFinding:
        """A claimed network function (in s) or a claimed list (poles, zeros, band edges)."""
        base, claim, tolerance = read.base, read.claim, read.tolerance
        if quantity.name in LIST_QUANTITIES:
            truths = evaluate_values(self.solution, quantity)
            return check_list(base, claim, truths, tolerance)
        if claim.form == "list":
            return StepFinding(**base, verdict="differs", message=f"a list is claimed, but {quantity} is one value")
        if claim.form != "laplace":
            return StepFinding(
                **base,
                verdict="unit",
                message='a network function is claimed as an expression in s (rad/s), like "1000/(s + 1000)"',
            )
        if quantity.name in ("impedance", "admittance"):
            from handcheck.solve.frequency import network_function

            h = network_function(self.solution, quantity, evaluate_quantity)
            truth = Value(h.expr, h.dim)
        elif quantity.name in ("network_function", "transfer"):
            truth = evaluate_quantity(self.solution, Quantity("network_function", quantity.args, quantity.text))
        else:
            return StepFinding(
                **base, verdict="unit", message=f"a function of s is claimed, but {quantity} is no network function"
            )
        return check_function_of_s(base, claim, truth, tolerance, self.formula_of_s(read))

    def formula_of_s(self, read: _Read) -> Value | UnitError | None:
        """The step's formula as a function of s (in 1/s) on the true part values; None
        without one, the error where its units do not add up."""
        if read.step.formula is None:
            return None
        try:
            tree = parse(read.step.formula, self.names | {"s"})
            return evaluate(tree, {**self.true_env, "s": S_IN_FORMULAS}, read.step.formula)
        except UnitError as exc:
            return exc
        except HandcheckError as exc:
            raise self.located(exc, read.step, "formula") from None

    @property
    def solution(self) -> Solution:
        """The exact steady-state phasors (computed on first use)."""
        return self.exact.phasors

    def located(self, exc: HandcheckError, step: StepSpec, key: str | None = None) -> HandcheckError:
        """The error with the file, the step's line, and the step's name in front
        (a fault of the circuit itself keeps its own place: the parts it names)."""
        if isinstance(exc, CircuitError) and exc.parts:
            return exc.located(self.worksheet.path, None)
        prefix = f'step "{step.name}": '
        if not exc.message.startswith(prefix):
            exc.message = prefix + exc.message
            exc.args = (exc.message,)
        return exc.located(self.worksheet.path, step.line_of(key) if key else step.line)

    def parse_formula(self, step: StepSpec) -> Node:
        assert step.formula is not None
        try:
            tree = parse(step.formula, self.names)
        except HandcheckError as exc:
            raise self.located(exc, step, "formula") from None
        for name in names_in(tree):
            if name not in self.names and self.circuit.has_part(name):
                part = self.circuit.part(name)
                what = "an op-amp" if part.kind == "opamp" else f"a {part.kind}"
                raise WorksheetError(
                    f'step "{step.name}": {name} is {what}, which has no value a formula can use by name; '
                    "write the number itself (for an op-amp, its open-loop gain)",
                    file=self.worksheet.path,
                    line=step.line_of("formula"),
                )
            if name == step.name:
                raise WorksheetError(
                    f'step "{step.name}": the formula uses the step itself; a formula may use only earlier steps',
                    file=self.worksheet.path,
                    line=step.line_of("formula"),
                )
            if name in self.function_steps:
                raise WorksheetError(
                    f'step "{step.name}": the formula uses "{name}", whose claim is a function of time; '
                    "a formula may use only steps with a single value",
                    file=self.worksheet.path,
                    line=step.line_of("formula"),
                )
            if name in self.step_names and name not in self.findings:
                raise WorksheetError(
                    f'step "{step.name}": the formula uses "{name}", which is a later step; '
                    "a formula may use only earlier steps",
                    file=self.worksheet.path,
                    line=step.line_of("formula"),
                )
        return tree

    def run(self) -> Report:
        for step in self.worksheet.steps:
            self.budget.check(f'step "{step.name}"')
            finding = self.check_step(step)
            self.findings[step.name] = finding
            if step.name not in self.function_steps:
                self.full_env[step.name] = self.unrounded(step, finding)
        solved = self.exact.phasors if self.exact.has_phasors else None
        if solved is None:
            try:
                solved = self.solution  # the caution looks at node voltages too
            except TimeLimitError:
                raise
            except HandcheckError:
                solved = None
        steps = tuple(self.settled(step, solved) for step in self.worksheet.steps)
        return Report(
            path=self.worksheet.path,
            sha256=self.worksheet.sha256,
            title=self.worksheet.title,
            reference=self.worksheet.reference,
            steps=steps,
            cautions=cautions(self.circuit, solved),
            notes=self.notes(),
            analysis=describe_frequency(self.circuit),
        )

    def tolerance_of(self, step: StepSpec) -> Tolerance:
        """The step's own tolerance, or the worksheet's."""
        if not step.tolerance:
            return self.default_tolerance
        return read_tolerance(step.tolerance, file=self.worksheet.path, line=step.line_of("tolerance"))

    def check_step(self, step: StepSpec) -> StepFinding:
        """The finding of one step: its claim against the circuit's truth and its formula."""
        path = self.worksheet.path
        try:
            claim = read_claim(step.claim, file=path, line=step.line_of("claim"))
            tolerance = self.tolerance_of(step)
        except HandcheckError as exc:
            raise self.located(exc, step, "claim") from None
        if claim.form != "function":
            self.claimed_env[step.name] = claim.value
        if claim.form not in ("function", "laplace", "list"):
            self.written[step.name] = Written(claim, tolerance)
        tree = self.parse_formula(step) if step.formula else None
        base: StepBase = {
            "name": step.name,
            "claimed": step.claim,
            "quantity": step.quantity,
            "formula": step.formula,
            "line": step.line,
        }
        read = _Read(step, base, claim, tolerance, tree)
        if step.quantity:
            quantity, truth = self.from_quantity(read)
            if isinstance(truth, StepFinding):
                return truth
            return self.against_truth(read, truth, quantity)
        if claim.form == "function":
            self.function_steps.add(step.name)
            return StepFinding(
                **base, verdict="unchecked", message="a claimed time function needs a quantity, like voltage(out)"
            )
        return self.against_truth(read, None, None)

    def from_quantity(self, read: _Read) -> tuple[Quantity, StepFinding | Value | None]:
        """The step's quantity, and its true value (or the finding of a function or response claim)."""
        step, claim, tolerance, base = read.step, read.claim, read.tolerance, read.base
        try:
            quantity = parse_quantity(str(step.quantity))
            if claim.form == "function":
                self.function_steps.add(step.name)
                span = lambda: comparison_span(self.worksheet, self.circuit, self.transient)  # noqa: E731
                return quantity, check_waveform(base, claim, quantity, tolerance, self.transient, span)
            if (
                claim.form in ("laplace", "list")
                or quantity.name in LIST_QUANTITIES
                or quantity.name == "network_function"
            ):
                self.function_steps.add(step.name)
                self.true_env[step.name] = claim.value
                return quantity, self.check_response(read, quantity)
            if quantity.name in TIME_DOMAIN:
                truth = evaluate_time_quantity(self.transient, quantity, lambda q: evaluate_quantity(self.solution, q))
                if quantity.name == "peak" and not to_complex(claim.value.expr).real < 0:
                    # the largest absolute value (worksheet format 1); a claim written
                    # negative is read as the signed extreme
                    truth = Value(abs(truth.expr), truth.dim)
            else:
                truth = evaluate_quantity(self.solution, quantity)
        except HandcheckError as exc:
            raise self.located(exc, step, "quantity") from None
        if truth is not None and claim.unit_text == "dB":
            truth = Value(sympy.Abs(truth.expr), truth.dim)  # a level claims the ratio's size
        return quantity, truth

    def against_truth(self, read: _Read, truth: Value | None, quantity: Quantity | None) -> StepFinding:
        """The step judged against the quantity's truth, or its formula's where it names none."""
        step, claim, base = read.step, read.claim, read.base
        formula_true: Value | None = None
        if read.tree is not None:
            try:
                formula_true = evaluate(read.tree, self.true_env, step.formula or "")
            except UnitError as exc:
                self.true_env[step.name] = truth or claim.value
                return StepFinding(
                    **base, verdict="unit", message=f"the formula is not consistent in its units: {exc.message}"
                )
            except HandcheckError as exc:
                cause = root_cause(read.tree, self.findings)
                if cause is None:
                    raise self.located(exc, step, "formula") from None
                self.true_env[step.name] = truth if truth is not None else claim.value
                return without_true_formula(read.base, claim, read.tolerance, truth, quantity, cause, exc.message)
        if truth is None:
            truth = formula_true
        if truth is None:
            self.true_env[step.name] = claim.value
            return StepFinding(
                **base, verdict="unchecked", message="no quantity and no formula: nothing to check the claim against"
            )
        self.true_env[step.name] = truth
        try:
            reference = to_complex(truth.expr)
        except HandcheckError as exc:
            raise self.located(exc, step, "quantity" if step.quantity else "formula") from None
        shown: Shown = {
            "expected": expected_text(truth, claim, quantity.name if quantity else None),
            "expected_si": (reference.real, reference.imag),
            "exact": truth.expr,
        }
        context = Context(
            circuit=self.circuit,
            claim=claim,
            tolerance=read.tolerance,
            truth=truth,
            formula=step.formula,
            tree=read.tree,
            quantity=quantity,
            claimed_env=dict(self.claimed_env),
            true_env=dict(self.true_env),
            full_env=dict(self.full_env),
            budget=self.budget,
            frequencies=self.frequencies,
            agreed=tuple(self.agreed),
        )
        unit = _unit_finding(read, shown, truth, formula_true)
        if unit is not None:
            if claim.dim == DIMENSIONLESS / truth.dim and claim.dim != truth.dim:
                reciprocal = dataclasses.replace(context, truth=Value(truth.expr, claim.dim))
                return self.diagnosed(unit, reciprocal, only=("impedance-as-admittance",))
            return unit
        shown["error"] = relative_error(claim, reference)
        if agrees(claim, reference, read.tolerance):
            if quantity is not None and quantity.name not in TIME_DOMAIN and claim.form in ("real", "rect", "polar"):
                self.agreed.append(Agreed(quantity, claim, read.tolerance))
            return StepFinding(
                **base, **shown, verdict="agrees", message=self.formula_remark(read.tree, step, claim, read.tolerance)
            )
        return self.differing(read, shown, context, (truth, reference), formula_true)

    def differing(
        self, read: _Read, shown: Shown, context: Context, true: tuple[Value, complex], formula_true: Value | None
    ) -> StepFinding:
        """A claim off the truth: a slip in its arithmetic, a wrong formula, an earlier error, or rounding."""
        step, claim, tree, base, tolerance = read.step, read.claim, read.tree, read.base, read.tolerance
        truth, reference = true
        if tree is None:
            return self.diagnosed(StepFinding(**base, **shown, verdict="differs"), context)
        try:
            following = self.follows(claim, tree, step.formula or "", tolerance)
        except HandcheckError as exc:
            raise self.located(exc, step, "formula") from None
        shown["recomputed"] = format_value(following.recomputed, claim)
        if not following.follows:
            return self.diagnosed(StepFinding(**base, **shown, verdict="arithmetic"), context)
        assert formula_true is not None
        if step.quantity and not agrees(claim, reference, tolerance, value=to_complex(formula_true.expr)):
            return self.diagnosed(StepFinding(**base, **shown, verdict="formula"), context)
        # The arithmetic follows from the author's numbers, but the method may not:
        # sizes of phasors added as plain numbers is a wrong formula, whatever the
        # earlier steps (never "carried" from a step that agrees, nor rounding).
        method = self.diagnosed(StepFinding(**base, **shown, verdict="formula"), context, only=("magnitude-as-phasor",))
        if method.diagnosis:
            return method
        cause = root_cause(tree, self.findings)
        if cause is not None:
            note = follows_note(following, claim)
            return StepFinding(**base, **shown, verdict="carried", caused_by=cause, message=note)
        finding, carried = rounded(
            StepFinding(**base, **shown, verdict="agrees"),
            tree,
            Written(claim, tolerance),
            truth,
            (self.true_env, self.written),
        )
        if carried is not None:
            self.written[step.name] = carried
        return finding

    def settled(self, step: StepSpec, solved: Solution | None) -> StepFinding:
        """The step's finding with its basis and notes; a formula-only step is told
        which steady-state quantity its formula's true value is, where one is (only
        when the phasors are solved already and no transient is involved)."""
        finding = self.findings[step.name]
        claim = read_claim(step.claim, file=self.worksheet.path, line=step.line_of("claim"))
        unit = unit_kind(claim)

        def matches() -> tuple[str, ...]:
            if solved is None or finding.exact is None or self.worksheet.transient or self.exact.counts["transient"]:
                return ()
            self.budget.check(f'step "{step.name}"')
            return matching_quantities(self.circuit, unit, finding.exact, lambda text: self.steady_value(solved, text))

        settled = settle(step, finding, unit, matches)
        if finding.verdict == "formula" and step.formula:
            earlier = {s.name: (s, self.findings[s.name]) for s in self.worksheet.steps if s.name in self.findings}
            used = formula_only_inputs_note(finding, names_in(parse(step.formula, self.names)), earlier)
            settled = dataclasses.replace(settled, notes=(*settled.notes, used)) if used else settled
        quantity = parse_quantity(step.quantity) if step.quantity else None
        if quantity is None:
            return settled
        notes = (
            measure_note(quantity.name, claim),
            other_frequencies_note(self.circuit, quantity, claim, self.tolerance_of(step)),
        )
        return dataclasses.replace(settled, notes=(*settled.notes, *filter(None, notes)))

    def steady_value(self, solved: Solution, text: str) -> Value:
        """A steady-state quantity by its text, each one evaluated at most once per check
        (a quantity that cannot be evaluated raises its error every time it is asked)."""
        if text not in self.steady_values:
            try:
                self.steady_values[text] = evaluate_quantity(solved, parse_quantity(text))
            except HandcheckError as exc:
                self.steady_values[text] = exc
        found = self.steady_values[text]
        if isinstance(found, HandcheckError):
            raise found
        return found

    def formula_remark(self, tree: Node | None, step: StepSpec, claim: Claim, tolerance: Tolerance) -> str | None:
        """For a right claim: a remark when the step's own formula does not give it."""
        if tree is None:
            return None
        try:
            following = self.follows(claim, tree, step.formula or "", tolerance)
        except TimeLimitError:
            raise
        except HandcheckError:
            return None
        if following.follows:
            return None
        return f"the claim is right, but the formula as written gives {format_value(following.recomputed, claim)}"

    def notes(self) -> tuple[str, ...]:
        """Remarks on the analysis an engineer should not miss."""
        sources = [p for p in self.circuit.parts if p.source is not None]
        if sources and not any(self.circuit.active(p) for p in sources):
            return (
                f"no source runs at the analysis frequency ({describe_frequency(self.circuit)}): "
                "every phasor there is zero; check the frequency in [worksheet] and the sources'",
            )
        return ()

    def unrounded(self, step: StepSpec, finding: StepFinding) -> Value:
        """The author's value of a step before rounding, as well as it can be known.

        A carried step keeps its claim as written: the written digits of what it
        carries already hold the author's unrounded numbers (module following), and
        its formula on a polar claim's exact value, step after step, is a sympy tree
        that doubles with each step."""
        claimed = self.claimed_env[step.name]
        if finding.verdict == "agrees" and step.name in self.true_env:
            return self.true_env[step.name]
        if finding.verdict == "formula" and step.formula:
            try:
                return evaluate(parse(step.formula, self.names), self.full_env, step.formula)
            except TimeLimitError:
                raise
            except HandcheckError:
                return claimed
        return claimed

    def follows(self, claim: Claim, tree: Node, text: str, tolerance: Tolerance) -> Following:
        """The formula on the author's numbers, and whether the claim follows from it."""
        return follows(claim, tolerance, tree, text, (self.claimed_env, self.full_env), self.written)

    @staticmethod
    def diagnosed(finding: StepFinding, context: Context, only: tuple[str, ...] | None = None) -> StepFinding:
        found = diagnose(context, only)
        if not found:
            return finding
        return dataclasses.replace(finding, diagnosis=tuple(Diagnosis(code, detail) for code, detail in found))


def check(worksheet: Worksheet, circuit: Circuit | None = None, *, exact: ExactSolutions | None = None) -> Report:
    """Check every step of a loaded worksheet.

    Parameters
    ----------
    worksheet
        The loaded worksheet.
    circuit
        Its circuit, when already built (:func:`handcheck.circuit.build.build`).
    exact
        The exact solutions to use and fill (they carry the time budget); a fresh
        holder without a time limit by default.

    Returns
    -------
    Report
        One finding per step.

    Raises
    ------
    HandcheckError
        For a worksheet that cannot be checked (malformed values or formulas, a
        circuit that cannot be solved); the error names the file and line.
    """
    if circuit is None:
        circuit = exact.circuit if exact is not None else build(worksheet)
    if exact is None:
        exact = ExactSolutions(circuit)
    return _Checker(worksheet, circuit, exact).run()
