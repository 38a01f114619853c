"""The proof-test calculator: read the typed inputs, compute PFDavg and the longest interval,
and write the result onto an IPL step with its inputs as the basis."""

import contextlib
import json
import math
from collections.abc import Mapping
from dataclasses import asdict, dataclass, replace
from typing import Any

from sqlmodel import Session

from app.db.compare_and_set import SaveOutcome
from app.db.models import Step, Study
from app.likelihood.numbers import format_number, parse_probability
from app.likelihood.proof_test import (
    PROOF_TEST_INTERVAL_CAP_HOURS,
    SifInputs,
    SimplifiedCheck,
    longest_proof_test_interval,
    pfd_avg,
    simplified_check,
    storable_pfd,
)
from app.likelihood.sif_verification import (
    SifVerification,
    Subsystem,
    SubsystemRole,
    verify_sif,
)
from app.likelihood.sil import HOURS_PER_YEAR, pfd_band
from app.likelihood.types import DemandMode, LikelihoodInputError, StepKind
from app.services.risk.proof_test_form import ProofTestForm, read_inputs, read_subsystems
from app.services.risk.step_details import StepNeed, StepPlace, locate_step, step_need
from app.services.study.conflicts import (
    KEEP_MINE,
    TAKE_THEIRS,
    FieldConflict,
    PageEdit,
    guarded_save,
    log_resolution,
    missing_row,
)
from app.services.study.tree import NotFoundError, get_study

METHOD = "IEC 61508-6 Annex B simplified equation"


@dataclass(frozen=True)
class ProofTestResult:
    """PFDavg and what it means, and the longest interval meeting the target."""

    inputs: SifInputs
    pfd: float
    pfd_text: str
    rrf: float
    band_label: str
    target_pfd: float | None
    meets_target: bool | None
    longest_hours: float | None
    longest_text: str
    verification: SifVerification | None = None
    """The function as subsystems: PFDavg their sum, SIL by PFD and by HFT (lower governs)."""
    simplified: tuple[SimplifiedCheck, ...] = ()
    """Each subsystem's λDU·T check; a failing one says the equations do not hold."""
    refusal: str = ""
    """Why this PFDavg cannot be stored on a step (above 1), else empty."""


@dataclass(frozen=True)
class ProofTestPage:
    """Display-ready data for the calculator page."""

    study: Study
    form: ProofTestForm
    errors: dict[str, str]
    result: ProofTestResult | None
    place: StepPlace | None
    need: StepNeed | None
    applied: bool = False
    loaded: "LoadedPfd | None" = None
    conflicts: tuple[FieldConflict, ...] = ()  # someone saved the step's PFD since (409)
    kept_theirs: bool = False  # "take theirs" after a conflict: nothing of this was saved


@dataclass(frozen=True)
class LoadedPfd:
    """The attached step's version and typed PFD when the calculator was opened, sent back as
    `version` and `orig_value_text`: applying never replaces a PFD someone saved since unseen."""

    version: int | None
    value_text: str
    value: str  # the number as sent back (repr), for a PFD stored without its typed text

    @classmethod
    def of(cls, place: StepPlace | None, edit: PageEdit | None = None) -> "LoadedPfd | None":
        """What the page knew (from the posted edit), else the step as stored now."""
        if place is None:
            return None
        if edit is not None and edit.version is not None:
            return cls(edit.version, str(edit.originals.get("value_text", "")),
                       str(edit.originals.get("value", "")))
        return cls(place.step.version, place.step.value_text, repr(place.step.value))


def band_label(pfd: float) -> str:
    """The low-demand SIL band a PFDavg falls in, said in words."""
    sil = pfd_band(pfd)
    if sil is not None:
        return f"SIL {sil}"
    if pfd >= 0.1:
        return "No SIL band (PFD 0.1 or more)"
    return "Better than the SIL 4 band (PFD below 1e-5): claim SIL 4 at most"


def describe_hours(hours: float) -> str:
    """Hours with the same time in years: '17,520 h (2 years)'."""
    years = hours / HOURS_PER_YEAR
    return f"{hours:,.0f} h ({years:.3g} year{'' if math.isclose(years, 1) else 's'})"


def _longest_text(longest: float | None, target: float) -> str:
    if longest is None:
        return (f"None: even testing continuously leaves PFDavg above {format_number(target)} "
                f"(the repair-time and common-cause terms alone exceed it).")
    if longest >= PROOF_TEST_INTERVAL_CAP_HOURS:
        return "100 years or more (the search stops there)."
    return describe_hours(longest)


ROLE_ORDER = (SubsystemRole.SENSORS, SubsystemRole.LOGIC_SOLVER, SubsystemRole.FINAL_ELEMENTS)


def calculate(inputs: SifInputs, target: float | None,
              subsystems: dict[str, SifInputs] | None = None,
              mode: DemandMode = DemandMode.LOW) -> ProofTestResult:
    """PFDavg by the Annex B equations (summed over the subsystems given), its band and RRF,
    the SIL by PFD and by HFT, and the inverse for the target (one subsystem only)."""
    given = subsystems or {"final_elements": inputs}
    verification = verify_sif([Subsystem(role, given[role.value]) for role in ROLE_ORDER
                               if role.value in given], mode)
    pfd = verification.pfd_avg if len(given) > 1 else pfd_avg(inputs)
    single = len(given) == 1 and target is not None
    longest = longest_proof_test_interval(inputs, target) if single and target else None
    return ProofTestResult(
        inputs=inputs, pfd=pfd, pfd_text=plain_number(pfd), rrf=1 / pfd,
        band_label=band_label(pfd), target_pfd=target,
        meets_target=None if target is None else pfd <= target,
        longest_hours=longest,
        longest_text=(_longest_text(longest, target) if single and target is not None
                      else "not searched for a function of several subsystems"),
        verification=verification,
        simplified=tuple(simplified_check(given[r.value]) for r in ROLE_ORDER
                         if r.value in given),
        refusal=_refusal(inputs, pfd),
    )


def _refusal(inputs: SifInputs, pfd: float) -> str:
    if pfd <= 1:
        return ""
    try:
        storable_pfd(replace(inputs))  # the engine's rule and sentence for a result above 1
    except LikelihoodInputError as err:
        return err.message
    return f"PFDavg: {plain_number(pfd)} is above 1, so it cannot be a PFD."


def _stored_form(step: Step) -> ProofTestForm | None:
    if not step.proof_test:
        return None
    typed = json.loads(step.proof_test).get("typed", {})
    return ProofTestForm.from_mapping(typed)


def read_calculator(*, session: Session, study_id: int, step_id: int | None = None,
                    applied: bool = False) -> ProofTestPage:
    """The calculator with defaults, or with the attached step's stored inputs and target."""
    study = get_study(session, study_id)
    place = _ipl_place(session, study_id, step_id)
    need = step_need(session, place) if place else None
    form = (_stored_form(place.step) if place else None) or ProofTestForm()
    if need is not None and need.required_pfd is not None and not form.target_pfd:
        form = replace(form, target_pfd=plain_number(need.required_pfd))
    return replace(evaluate(study, form, place, need, applied=applied),
                   loaded=LoadedPfd.of(place))


def evaluate(study: Study, form: ProofTestForm, place: StepPlace | None,
             need: StepNeed | None, *, applied: bool = False) -> ProofTestPage:
    """Compute the page for these typed inputs (errors at their fields, nothing saved)."""
    inputs, target, errors = read_inputs(form)
    if inputs is None:
        return ProofTestPage(study, form, errors, None, place, need, applied)
    subsystems, errors = read_subsystems(form, inputs)
    if errors:
        return ProofTestPage(study, form, errors, None, place, need, applied)
    mode = DemandMode.HIGH if need is not None and need.high_demand else DemandMode.LOW
    try:
        result = calculate(inputs, target, subsystems, mode)
    except LikelihoodInputError as err:
        return ProofTestPage(study, form, {"architecture": err.message}, None, place, need,
                             applied)
    return ProofTestPage(study, form, errors, result, place, need, applied)


def calculate_page(*, session: Session, study_id: int, form: ProofTestForm,
                   step_id: int | None = None, edit: PageEdit | None = None) -> ProofTestPage:
    """The calculator page for typed inputs (the live recalculation)."""
    study = get_study(session, study_id)
    place = _ipl_place(session, study_id, step_id)
    need = step_need(session, place) if place else None
    return replace(evaluate(study, form, place, need), loaded=LoadedPfd.of(place, edit))


def _ipl_place(session: Session, study_id: int, step_id: int | None) -> StepPlace | None:
    if step_id is None:
        return None
    place = locate_step(session, study_id, step_id)
    if place.step.kind != StepKind.IPL:
        raise NotFoundError(f"Step {step_id} is not a protection layer: the proof-test "
                            f"calculator attaches only to an IPL.")
    return place


def plain_number(x: float) -> str:
    """Three significant figures, as a person writes them: 0.00219 -> '2.19e-3', 0.05 -> '0.05'."""
    if x == 0 or 1e-2 <= x < 1e4:
        return f"{x:.3g}"
    mantissa, exponent = f"{x:.2e}".split("e")
    return f"{mantissa.rstrip('0').rstrip('.')}e{int(exponent)}"


def basis_line(inputs: SifInputs, pfd: float) -> str:
    """The sentence appended to the step's basis saying how its PFD was worked out."""
    parts = [f"{METHOD}, {inputs.architecture}", f"λDU={plain_number(inputs.lambda_du)}/h",
             f"λDD={plain_number(inputs.lambda_dd)}/h"]
    if inputs.beta is not None:
        parts += [f"β={inputs.effective_beta:g}", f"βD={inputs.effective_beta_d:g}"]
    parts += [f"T1={inputs.proof_test_interval_hours:g} h", f"MTTR={inputs.mttr_hours:g} h",
              f"MRT={inputs.effective_mrt_hours:g} h"]
    return ", ".join(parts) + f": PFDavg {plain_number(pfd)}."


def _stored_json(form: ProofTestForm, result: ProofTestResult) -> str:
    numbers = {k: v for k, v in asdict(result.inputs).items()}
    numbers["architecture"] = str(result.inputs.architecture)
    return json.dumps({"method": METHOD, **numbers, "pfd_avg": result.pfd,
                       "typed": asdict(form)}, ensure_ascii=False)


BASIS_LIMIT = 2000


def apply_to_step(*, session: Session, study_id: int, step_id: int, form: ProofTestForm,
                  edit: PageEdit | None = None, resolution: str = "",
                  seen: Mapping[str, str] | None = None) -> ProofTestPage:
    """Set the IPL's PFD to the computed PFDavg with its inputs as basis; errors save nothing.

    A PFD someone saved since the calculator was opened stops it (409, both values);
    `resolution` answers that: "keep" applies this result over theirs, "take" saves nothing
    of it; both are logged.
    """
    page = calculate_page(session=session, study_id=study_id, form=form, step_id=step_id,
                          edit=edit)
    if page.result is None or page.place is None:
        return page
    if page.result.refusal:  # a PFD above 1 is never stored
        return replace(page, errors={"basis": page.result.refusal})
    step, line = page.place.step, basis_line(page.result.inputs, page.result.pfd)
    verification = page.result.verification
    if verification is not None and len(verification.subsystems) > 1:
        parts = " + ".join(f"{r.subsystem.role.value.replace('_', ' ')} "
                           f"{r.subsystem.inputs.architecture} {plain_number(r.pfd_avg)}"
                           for r in verification.subsystems)
        line = (f"{METHOD}, function as subsystems (shared T1, MTTR, β): {parts} "
                f"= PFDavg {plain_number(page.result.pfd)}.")
    basis = f"{step.basis.rstrip()}\n{line}" if step.basis.strip() else line
    if len(basis) > BASIS_LIMIT:
        message = (f"Basis: adding the calculation would make the basis {len(basis)} characters, "
                   f"over the {BASIS_LIMIT} allowed; shorten the step's basis first.")
        return replace(page, errors={"basis": message})
    changes = {"value": page.result.pfd, "value_text": plain_number(page.result.pfd),
               "proof_test": _stored_json(form, page.result), "basis": basis}
    return _save_pfd(session, page, changes, edit or PageEdit(), resolution, seen or {})


def _save_pfd(session: Session, page: ProofTestPage, changes: Mapping[str, Any],
              edit: PageEdit, resolution: str, seen: Mapping[str, str]) -> ProofTestPage:
    """Write the result unless someone saved the step's PFD since the page was opened."""
    assert page.place is not None
    step, theirs = page.place.step, seen.get("value_text")
    if resolution in (KEEP_MINE, TAKE_THEIRS) and theirs is not None:
        log_resolution(session, step, "value_text", kept_mine=resolution == KEEP_MINE,
                       theirs=theirs, mine=str(changes["value_text"]))
        if resolution == TAKE_THEIRS:
            session.commit()
            return replace(page, kept_theirs=True)
    if resolution == KEEP_MINE and theirs is not None:
        # Their text still stored: their number is the stored one (a computed PFD keeps more
        # digits than its text shows).
        number = repr(step.value) if step.value_text == theirs else ""
        loaded = _pfd_of({"value_text": theirs, "value": number})
    else:
        loaded = _pfd_of(edit.originals)
    # The basis and inputs are the stored ones plus this result: only the PFD is guarded.
    originals = {"basis": step.basis, "proof_test": step.proof_test, **loaded}
    result = guarded_save(session, Step, int(step.id or 0), replace(edit, originals=originals),
                          changes)
    if result.outcome is SaveOutcome.DELETED:
        session.rollback()
        raise missing_row(session, step.study_id, Step, int(step.id or 0), "The step is gone.")
    if result.outcome is SaveOutcome.CHANGED_SINCE:
        session.rollback()
        shown = tuple(c for c in result.conflicts if c.field == "value_text")
        return replace(page, conflicts=shown or result.conflicts)
    session.commit()
    return replace(page, applied=True)


def _pfd_of(texts: Mapping[str, Any]) -> dict[str, Any]:
    """The PFD the page showed (its text and its number, as sent), so both compare alike;
    a number that was not sent is read from the text. Any: raw form values."""
    loaded: dict[str, Any] = {}
    if "value_text" in texts:
        loaded["value_text"] = str(texts["value_text"])
    try:
        loaded["value"] = float(str(texts.get("value", "")))
    except ValueError:
        with contextlib.suppress(LikelihoodInputError):  # unreadable: not compared
            loaded["value"] = parse_probability(loaded.get("value_text", "")).value
    return loaded
