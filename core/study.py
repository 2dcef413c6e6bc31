"""The study: every result any view shows, computed once from one :class:`Train`.

One result object flows one way: file -> document -> model -> **study** -> views.
The command line, the desktop program and the review sheet all call
:func:`run_study` and only format what it holds; none of them chooses modes or
runs a solve of its own.  New analyses plug in here as a named part (see
``PARTS``): each is computed from the train and the results before it, and is
``None`` when it does not apply or was not asked for.

The one rule for how many modes are solved (:func:`choose_modes`):
  * ``max_frequency_hz`` given: every mode up to it;
  * ``n_modes`` given: the lowest N elastic modes;
  * otherwise every mode up to the screening limit (above the highest
    excitation frequency the operating range reaches, :func:`core.screening.screening_cap_hz`),
    and never fewer than the lowest ``MIN_ELASTIC_MODES`` elastic modes — those
    above the screening limit are shown and marked, not left out.
"""
from __future__ import annotations

import time
from dataclasses import dataclass, field, replace
from functools import cached_property

import numpy as np

from .errors import ModelError
from .model import Train

MIN_ELASTIC_MODES = 6
#: damped natural frequencies come from a dense eigenproblem of twice the discs' size: above this
#: many discs the study leaves them out with a note (a solve would take seconds to minutes)
DAMPED_MAX_DISCS = 120

#: the analyses a study can hold, in the order they are computed
PARTS = ("screening", "sensitivities", "design", "response", "acceptance", "damped", "transients")
ALL_PARTS = frozenset(PARTS)
#: what the desktop program recomputes after every edit (transients run on request)
LIVE_PARTS = ALL_PARTS - {"transients"}


@dataclass(frozen=True)
class StudyOptions:
    """What the user asked for; ``None`` means the project's own setting.

    ``margin``: required separation as a fraction (overrides the project's).
    ``speeds``: reference-shaft speeds in rad/s for the forced response.
    ``parts``: which analyses to run besides the modes (all by default; the
    command line's ``solve`` asks for fewer).  "sensitivities" gives the design
    part without the windows (their cost is the search over an element's value).
    ``events``: the transient events to integrate (all by default).
    """

    max_frequency_hz: float | None = None
    n_modes: int | None = None
    margin: float | None = None
    speeds: tuple[float, ...] | None = None
    parts: frozenset = ALL_PARTS
    events: tuple[str, ...] | None = None  # transient events to run (None: every one)
    # one element's window on request (`twistwise window`): (element id, "stiffness" |
    # "inertia" | None, (low, high) SI or None for the current value / 100 to x 100)
    window_of: tuple | None = None

    def __post_init__(self):
        if self.max_frequency_hz is not None and self.n_modes is not None:
            raise ModelError("give either a frequency limit or a number of modes, not both",
                             "option", "--modes")
        if self.max_frequency_hz is not None and not self.max_frequency_hz > 0:
            raise ModelError("must be greater than zero", "option", "--max-frequency")
        if self.n_modes is not None and self.n_modes < 1:
            raise ModelError("must be at least 1", "option", "--modes")
        if self.margin is not None and not 0.0 <= self.margin <= 0.5:
            raise ModelError(f"must be between 0 and 50 %, got {100 * self.margin:g}", "option", "--margin")
        unknown = set(self.parts) - ALL_PARTS
        if unknown:
            raise ValueError(f"unknown study parts {sorted(unknown)}")


def screening_limit_hz(train: Train, margin: float | None = None) -> float | None:
    """The screening limit of ``train`` (Hz), or None without operating data or excitations."""
    op = train.operating
    if op is None or not op.excitations:
        return None
    from .screening import excitation_lines, screening_cap_hz
    cap = screening_cap_hz(excitation_lines(train, op), op.speed_max, op.margin if margin is None else margin)
    return cap if cap > 0 else None


def choose_modes(train: Train, options: StudyOptions = StudyOptions()):
    """The modes a study shows, by the one rule in the module docstring.

    A request for more modes than one solve returns (:func:`core.solver.mode_limit`)
    is refused naming the option; where the screening limit holds more, the lowest
    modes up to the limit are shown with a note.
    """
    from .solver import ModeLimitError, natural_modes
    if options.max_frequency_hz is not None:
        try:
            return natural_modes(train, max_frequency_hz=options.max_frequency_hz)
        except ModeLimitError as exc:
            raise ModelError(exc.message + "; ask for a lower --max-frequency", "option",
                             "--max-frequency") from None
    if options.n_modes is not None:
        try:
            return natural_modes(train, n_modes=options.n_modes)
        except ModeLimitError as exc:
            raise ModelError(exc.message, "option", "--modes") from None
    cap = screening_limit_hz(train, options.margin)
    if cap is not None and _fewer_than_minimum(train, cap):
        # the lowest N hold every mode under the limit: solved once, not after a solve to the limit
        return natural_modes(train, n_modes=MIN_ELASTIC_MODES)
    if cap is not None:
        try:
            modes = natural_modes(train, max_frequency_hz=cap)
        except ModeLimitError as exc:
            modes = natural_modes(train, n_modes=exc.limit)
            modes.notes.append(f"{exc.count} natural frequencies lie below the screening limit "
                               f"({cap:.6g} Hz); the lowest {exc.limit} are shown")
            return modes
        if int(modes.elastic.sum()) >= MIN_ELASTIC_MODES or modes.complete_to_hz == float("inf"):
            return modes
        # fewer than the minimum under the limit: the lowest N hold all of them
        return natural_modes(train, n_modes=MIN_ELASTIC_MODES)
    return natural_modes(train, n_modes=MIN_ELASTIC_MODES)


def _fewer_than_minimum(train: Train, cap_hz: float) -> bool:
    """True when fewer than ``MIN_ELASTIC_MODES`` elastic modes lie below ``cap_hz`` and the
    model has more finite modes than that: the count at the cap (one factorization) says so
    before any mode is solved (the rule in the module docstring then takes the lowest N)."""
    from .solver import TWO_PI, dynamic_system, zero_roots
    system = dynamic_system(train)
    total = int(system.count(TWO_PI * max(cap_hz, 1e-9))[0])
    finite = system.asm.n_finite_modes
    return total - zero_roots(system.asm) < MIN_ELASTIC_MODES and (finite is None or total < finite)


@dataclass(frozen=True)
class Study:
    """Everything the views show.  Arrays and results are read-only by convention.

    ``response_error``: why the forced response could not be computed although
    amplitudes are given (a :class:`ModelError`), else None.  Views that must
    refuse (``twistwise response``) raise it; the others print it.
    ``screening_error`` likewise for a screening that cannot be complete (more
    modes below the screening limit than one solve returns): there is then no
    verdict, never a PASS.
    """

    train: Train
    options: StudyOptions
    modes: object  # core.solver.Modes
    screening: object | None = None  # core.screening.Screening
    response: object | None = None  # core.response.Response
    response_error: ModelError | None = None
    screening_error: ModelError | None = None
    design: object | None = None
    window: object | None = None  # core.design.WindowResult asked for by StudyOptions.window_of
    acceptance: object | None = None
    damped: object | None = None  # core.damped.DampedModes
    damper: object | None = None  # core.damped.DamperBounds (trains with a viscous damper's ring)
    transients: object | None = None
    notes: tuple[str, ...] = ()
    solve_time_s: float = 0.0
    timings: dict = field(default_factory=dict, compare=False)

    # ------------------------------------------------------------- modes
    @property
    def screening_limit_hz(self) -> float | None:
        """Modes above this frequency are shown but were not screened (None: no limit)."""
        return None if self.screening is None else self.screening.cap_hz

    @cached_property
    def above_screening_limit(self) -> np.ndarray:
        """Per mode: True where the mode lies above the screening limit (marked, not screened)."""
        cap = self.screening_limit_hz
        f = self.modes.frequency_hz
        if cap is None:
            return np.zeros(len(f), bool)
        return (f > cap) & self.modes.elastic

    # ------------------------------------------------------------- forced response
    @property
    def has_amplitudes(self) -> bool:
        from .response import has_amplitudes
        return has_amplitudes(self.train)

    @cached_property
    def response_peaks(self) -> tuple:
        """Per-link peaks (:func:`core.response.response_summary`), on first use."""
        if self.response is None:
            return ()
        from .response import response_summary
        return tuple(response_summary(self.response))

    @cached_property
    def band_peaks(self) -> tuple:
        """Peaks of every link in every speed band (start-up/run-down, operating, overspeed),
        polished between computed speeds (:func:`core.response.band_peaks`), on first use."""
        if self.response is None:
            return ()
        from .response import band_peaks
        return tuple(band_peaks(self.response))

    @cached_property
    def exceedances(self) -> tuple:
        """Permissible values exceeded, worst first (:func:`core.response.exceedances`)."""
        if self.response is None:
            return ()
        from .response import exceedances
        return tuple(exceedances(self.response))

    # ------------------------------------------------------------- acceptance
    @cached_property
    def argument(self):
        """The acceptance argument the trade makes (:func:`core.acceptance.acceptance_argument`):
        separation for the modes that can be kept clear, the forced response against the limits
        for the rest, each mode named; None without a screening."""
        if self.screening is None:
            return None
        from .acceptance import acceptance_argument
        return acceptance_argument(self.screening, self.acceptance)

    @property
    def acceptance_failed(self) -> bool:
        return self.acceptance is not None and self.acceptance.passed is False

    # ------------------------------------------------------------- verdicts
    @property
    def separation_passed(self) -> bool | None:
        return None if self.screening is None else self.screening.passed

    @property
    def response_failed(self) -> bool:
        return bool(self.exceedances)

    @property
    def verdict(self) -> str | None:
        """The review's verdict: "pass", "fail", "open" (not yet accepted: a coincidence without a
        forced response or a limit to judge it, or a screening that could not be completed), or
        None when there was nothing to screen and nothing failed.  Separation where every mode
        clears; the acceptance argument (:attr:`argument`) where some cannot; any failing check
        of the forced response or of a transient event makes it "fail"."""
        if self.screening_error is not None:
            return "open"
        if self.argument is not None:
            v = self.argument.verdict
        elif self.screening is not None:
            v = "pass" if self.screening.passed else "fail"
        else:
            v = None
        failed = self.acceptance_failed if self.acceptance is not None else self.response_failed
        if failed or (self.transients is not None and self.transients.passed is False):
            v = "fail"
        return v

    @property
    def passed(self) -> bool:
        """The verdict passes (or there was nothing to screen and nothing failed)."""
        return self.verdict in ("pass", None)


def _require_finite(modes) -> None:
    """No result from a non-number: a study with a non-finite natural frequency or
    mode shape stops here, naming what to look at."""
    bad = ~np.isfinite(modes.frequency_hz)
    if len(modes) and np.isfinite(modes.shape).all() and not bad.any():
        return
    raise ModelError("the natural frequencies are not finite numbers: a value far outside any real "
                     "train (a huge gear ratio, stiffness or inertia) leaves the model meaningless; "
                     "check the values entered", "train", "links")


def _timed(timings: dict, name: str, fn, *args, **kwargs):
    t0 = time.perf_counter()
    try:
        return fn(*args, **kwargs)
    finally:
        timings[name] = time.perf_counter() - t0


def run_study(train: Train, options: StudyOptions = StudyOptions()) -> Study:
    """Modes, screening and, where they apply, the analyses that follow — once.

    Raises :class:`ModelError` for input the analyses refuse (named element and
    field); a forced response that cannot be computed is recorded in
    ``response_error`` so that the modes and screening still show.
    """
    t0 = time.perf_counter()
    timings: dict = {}
    parts = options.parts
    modes = _timed(timings, "modes", choose_modes, train, options)
    _require_finite(modes)
    notes = list(modes.notes)
    screening = None
    op = train.operating
    screening_error = None
    if "screening" in parts and op is not None and op.excitations:
        from .screening import screen
        from .solver import ModeLimitError
        try:
            screening = _timed(timings, "screening", screen, train, modes, options.margin)
        except ModeLimitError as exc:
            screening_error = ModelError(
                f"cannot screen: {exc.count} natural frequencies lie below the screening limit of "
                f"{exc.below_hz:.6g} Hz and one solve returns at most {exc.limit} for this train; "
                "a model this fine resolves modes no excitation needs — merge discs, or narrow the "
                "excitations", "operating data", "excitations")
        else:
            if options.max_frequency_hz is None and options.n_modes is None:
                modes = screening.modes  # the same set, or more when the margin option raised the limit
    window = None
    if options.window_of is not None:
        from .design import element_window
        eid, quantity, value_range = options.window_of
        window = _timed(timings, "window", element_window, train, eid, quantity, value_range,
                        None if screening is None else screening.margin)
    study = Study(train, options, modes, screening, screening_error=screening_error, window=window,
                  notes=tuple(notes), timings=timings)
    study = extend_study(study, parts)
    return replace(study, solve_time_s=time.perf_counter() - t0)


def extend_study(study: Study, parts) -> Study:
    """``study`` with the analyses in ``parts`` added (those it already holds are kept): the
    desktop program shows the modes and the screening at once and adds the slower parts
    (windows, acceptance, damped modes) when they are ready, without solving anything twice.
    Cached answers of the old study (peaks, the argument) are computed afresh on the new one."""
    train, options, modes, screening = study.train, study.options, study.modes, study.screening
    timings = dict(study.timings)
    op = train.operating
    t0 = time.perf_counter()
    design = study.design
    wants_windows = "design" in parts
    if ("design" in parts or "sensitivities" in parts) and study.screening_error is None \
            and (design is None or (wants_windows and not design.windows and _has_windows(train))):
        from .design import analyse_design
        design = _timed(timings, "design", analyse_design, train, modes, screening,
                        elements=None if wants_windows else [])
    response, response_error = study.response, study.response_error
    if "response" in parts and op is not None and response is None and response_error is None:
        from . import response as core_response
        if core_response.has_amplitudes(train):
            speeds = None if options.speeds is None else np.asarray(options.speeds, float)
            try:
                response = _timed(timings, "response", core_response.forced_response, train, speeds)
            except ModelError as exc:
                response_error = exc
    acceptance = study.acceptance
    if "acceptance" in parts and response is not None and acceptance is None:
        from .acceptance import analyse_acceptance
        acceptance = _timed(timings, "acceptance", analyse_acceptance, train, response)
    damped, damper = study.damped, study.damper
    if "damped" in parts and damped is None:
        from .damped import DampedModes, damped_modes, damper_bounds, has_damping
        if has_damping(train):
            shown = float(np.max(modes.frequency_hz)) if len(modes) else 0.0
            cap = max(screening.cap_hz if screening is not None else 0.0, shown)
            if len(train.discs) > DAMPED_MAX_DISCS:
                damped = DampedModes(train, [], [], [
                    f"damped natural frequencies are computed for trains of up to {DAMPED_MAX_DISCS} discs; "
                    f"this one has {len(train.discs)}"])
            elif cap > 0:
                damped = _timed(timings, "damped", damped_modes, train, max_frequency_hz=cap)
            if cap > 0:
                damper = _timed(timings, "damper", damper_bounds, train, cap)
    transients = study.transients
    if "transients" in parts and train.transients and transients is None:
        from .loads import load_torque_table
        from .ratings import transient_peak_limits
        from .transient import run_transients

        def load_case_torque(name, disc_id):
            return load_torque_table(train, name, disc_id)
        transients = _timed(timings, "transients", run_transients, train, options.events,
                            peak_limits=transient_peak_limits(train), load_case_torque=load_case_torque)
    return replace(study, design=design, response=response, response_error=response_error,
                   acceptance=acceptance, damped=damped, damper=damper, transients=transients,
                   timings=timings, solve_time_s=study.solve_time_s + time.perf_counter() - t0)


def _has_windows(train: Train) -> bool:
    from .design import design_elements
    return bool(train.operating is not None and train.operating.excitations and design_elements(train))
