"""The case: an investigation's hypotheses, priors, evidence and prior scenarios.

Every edit validates before it changes anything: a rejected edit raises a
:class:`~beliefledger.errors.CaseError` (a ``ValueError``) or
:class:`~beliefledger.errors.CaseTypeError` and leaves the case exactly as it
was. All changes of state go through one boundary, :meth:`Case._edit`, which
snapshots the state, validates the result and restores the snapshot on any
exception. Members (see :mod:`.members`) are immutable; an edit builds new
members and swaps them in only when the whole new state is valid.

Sums are handled in two tiers. Whole tables given at once (``Case(...)``,
``add_evidence``, ``set_priors``, ``add_scenario``) must be coherent: priors
sum to 1 and each likelihood column sums to 1 within ``SUM_TOL`` unless
``normalize=True`` (recorded as an assumption). Single-cell edits
(``set_prior``, ``set_likelihood(..., state=...)``) may leave a sum off while
the analyst is part-way through typing; the ledger then carries a
``prior-sum`` or ``column-sum`` flag of severity ``error`` until it is
fixed. Loaded files follow the second rule so that nothing saved is lost.

This module is longer than the others on purpose: one class with one
transaction boundary is easier to keep correct than edits spread over
mixins; parsing, dependence, serial form and extras live beside it.
"""

from __future__ import annotations

import contextlib
import copy
from collections.abc import Callable, Iterable, Mapping
from dataclasses import replace
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from .._checks import (
    SUM_TOL,
    check_flag,
    check_keys,
    check_name,
    check_probability,
    check_text,
    fmt_g,
    lookup,
    short_list,
)
from ..errors import CaseError, CaseTypeError
from . import dependence as dep
from . import revision as rv
from . import serial
from .artefacts import make_artefact
from .extras import hypotheses_changed, validate_extra
from .members import (
    BASE_SCENARIO,
    CASE_MIMETYPE,
    LIKELIHOOD_FORM,
    PROBABILITY_FORM,
    SCENARIO_MEANINGS,
    Artefact,
    Evidence,
    Hypothesis,
    JointGroup,
    Scenario,
    Source,
    UncertainObservation,
)
from .parsing import (
    is_catch_all_name,
    parse_column,
    parse_hypotheses,
    parse_joint,
    parse_table,
    per_hypothesis,
)
from .rollups import HYPOTHESIS_GROUPS, group_members
from .uncertain import parse_weights, report_weights


class Case:
    """An investigation: hypotheses, priors, evidence and prior scenarios.

    Parameters
    ----------
    title : str
        Short title of the case.
    hypotheses : mapping, list, Series or DataFrame
        ``{"H1": 0.5, ...}``; or ``{"H1": {"prior": 0.5, "source": ..., "description": ...,
        "catch_all": ...}}``; or a list of such dicts with a ``name`` key, or of
        :class:`Hypothesis`; or a Series of priors; or a DataFrame with a
        ``name`` column (or names as index), a ``prior`` column and optional
        ``description``, ``catch_all``, ``where``, ``who``, ``when``, ``why``.
    question, analyst, notes : str
        The question the case answers, who works it, free notes.
    normalize : bool
        Rescale priors that do not sum to 1; recorded as an assumption.
    exhaustive : bool
        Declare the hypothesis set provably exhaustive (silences the
        ``no-catch-all`` flag; say why in ``notes``).
    source : Source, str or dict, optional
        Default Source for priors given without one.
    safety_related : bool
        The case touches health or safety: records carry the extra caution.

    Examples
    --------
    >>> import beliefledger as bl
    >>> case = bl.Case("Pump trip", hypotheses={"bearing": 0.6, "Other": 0.4})
    >>> case
    Case('Pump trip': 2 hypotheses, priors sum to 1; 0 evidence items, 0 observed; scenario 'base')
    """

    def __init__(
        self,
        title: str,
        hypotheses: Any,
        *,
        question: str = "",
        analyst: str = "",
        notes: str = "",
        normalize: bool = False,
        exhaustive: bool = False,
        source: Any = None,
        safety_related: bool = False,
    ) -> None:
        self._init_fields(title=title, question=question, analyst=analyst, notes=notes,
                          exhaustive=exhaustive, safety_related=safety_related)
        default_source = Source.coerce(source, what="case source")
        hyps = parse_hypotheses(hypotheses, default_source)
        self._hyps = {h.name: h for h in hyps}
        total = sum(h.prior for h in hyps)
        if abs(total - 1.0) > SUM_TOL:
            if not normalize:
                raise CaseError(
                    f"priors sum to {fmt_g(total)}, not 1 (within {SUM_TOL:g}); "
                    "fix them or pass normalize=True to rescale them (recorded as an assumption)"
                )
            self._hyps = _rescaled(self._hyps, total)
            self._record("normalize-priors", BASE_SCENARIO,
                         f"priors entered summed to {fmt_g(total)}; rescaled to sum to 1")

    def _init_fields(self, *, title: Any, question: Any, analyst: Any, notes: Any,
                     exhaustive: Any, safety_related: Any) -> None:
        self.title = check_name("case title", title)
        self.question = check_text("question", question)
        self.analyst = check_text("analyst", analyst)
        self.notes = check_text("notes", notes)
        self.exhaustive = check_flag("exhaustive", exhaustive)
        self.safety_related = check_flag("safety_related", safety_related)
        self._hyps: dict[str, Hypothesis] = {}
        self._evidence: dict[str, Evidence] = {}
        self._scenarios: dict[str, Scenario] = {}
        self._groups: dict[str, JointGroup] = {}
        self._active = BASE_SCENARIO
        self.assumptions: list[dict[str, str]] = []
        self.extras: dict[str, Any] = {}
        self._listeners: list[Callable[[Case, str], None]] = []
        self._version = 0

    # ------------------------------------------------------------------ views
    @property
    def hypotheses(self) -> dict[str, Hypothesis]:
        """Hypotheses in order, name -> :class:`Hypothesis` (a copy of the mapping)."""
        return dict(self._hyps)

    @property
    def hypothesis_names(self) -> list[str]:
        return list(self._hyps)

    @property
    def evidence(self) -> dict[str, Evidence]:
        """Evidence items in order, name -> :class:`Evidence` (a copy of the mapping)."""
        return dict(self._evidence)

    @property
    def evidence_names(self) -> list[str]:
        return list(self._evidence)

    @property
    def base_priors(self) -> pd.Series:
        """The hypothesis table's own priors (the 'base' scenario)."""
        return self.scenario_priors(BASE_SCENARIO)

    @property
    def scenarios(self) -> dict[str, Scenario]:
        """Named prior scenarios added with :meth:`add_scenario` (not 'base')."""
        return dict(self._scenarios)

    @property
    def scenario_names(self) -> list[str]:
        """'base' followed by the named scenarios, in the order added."""
        return [BASE_SCENARIO, *self._scenarios]

    @property
    def active_scenario(self) -> str:
        return self._active

    @property
    def priors(self) -> pd.Series:
        """Priors of the active scenario (the ones :meth:`update` uses)."""
        return self.scenario_priors(self._active)

    def prior_array(self, scenario: str | None = None) -> np.ndarray:
        """The priors of ``scenario`` (default: the active one) as an array in hypothesis
        order (what the engine reads; :attr:`priors` is the same as a Series)."""
        name = self._active if scenario is None else scenario
        if name == BASE_SCENARIO:
            return np.fromiter((h.prior for h in self._hyps.values()), float, len(self._hyps))
        sc = self.prior_scenario(name)
        return np.fromiter((sc.priors[h] for h in self._hyps), float, len(self._hyps))

    def scenario_priors(self, name: str) -> pd.Series:
        """The priors of scenario ``name`` as a Series indexed by hypothesis."""
        return pd.Series(self.prior_array(name), index=list(self._hyps), name="prior")

    @property
    def observed_evidence(self) -> list[Evidence]:
        """The items that enter the update (a state seen, or an uncertain observation)."""
        return [e for e in self._evidence.values() if e.is_observed]

    @property
    def version(self) -> int:
        """Increases by one with every successful edit (views use it to refresh)."""
        return self._version

    # ------------------------------------------------------------------ lookups
    def hypothesis(self, name: str) -> Hypothesis:
        """The hypothesis called ``name`` (an error listing the hypotheses if none is)."""
        return lookup("hypothesis", "hypotheses", self._hyps, name)

    def evidence_item(self, name: str) -> Evidence:
        """The evidence item called ``name`` (an error listing the items if none is)."""
        return lookup("evidence", "evidence items", self._evidence, name)

    def prior_scenario(self, name: str) -> Scenario:
        """The named prior scenario (not 'base'; an error listing the scenarios if absent)."""
        return lookup("scenario", "scenarios", self._scenarios, name, known=self.scenario_names)

    def joint_group(self, name: str) -> JointGroup:
        """The joint evidence group called ``name``."""
        return lookup("joint group", "joint groups", self._groups, name)

    # ------------------------------------------------------------------ compute
    def update(self):
        """Run the sequential Bayesian update; returns a :class:`~beliefledger.engine.Ledger`."""
        from ..engine import update

        return update(self)

    def observed_steps(self, scenario: str | None = None
                       ) -> list[tuple[str, tuple[str, ...], np.ndarray]]:
        """The update steps in order: ``(step name, member items, P(observed | H) vector)``.

        One step per observed evidence item, except that the observed members
        of a joint group make one step (named after the group, placed at its
        first observed member) and a conditional item contributes P(its state
        | the evidence before it, H); see :mod:`beliefledger.case.dependence`.
        An uncertain observation contributes its weighted rows; a Jeffrey
        (probability-form) step's vector depends on the priors, so it is the
        one under ``scenario`` (default: the active one).
        """
        steps = self.observed_log_steps()
        if not steps.jeffrey:
            return dep.observed_steps(self._evidence, self._groups, len(self._hyps))
        from ..engine import resolved_log_steps

        res = resolved_log_steps(self, scenario)
        with np.errstate(under="ignore"):
            return [(n, res.members[n], np.exp(r)) for n, r in zip(res.names, res.rows,
                                                                   strict=True)]

    def observed_log_steps(self) -> dep.LogSteps:
        """The update steps in log space (names, members, ln P(observed | H) rows and
        their shifted forms); what the engine reads."""
        return dep.observed_log_steps(self._evidence, self._groups, len(self._hyps))

    def observed_log_likelihoods(self, scenario: str | None = None
                                 ) -> tuple[list[str], np.ndarray]:
        """Step names and ln P(observed | H) per step as a steps x hypotheses array (a
        Jeffrey step's row as it is under ``scenario``, default the active one)."""
        steps = self.observed_log_steps()
        if steps.jeffrey:
            from ..engine import resolved_log_steps

            steps = resolved_log_steps(self, scenario)
        if not steps.rows:  # no observed evidence: zero steps, one column per hypothesis
            return [], np.zeros((0, len(self.hypothesis_names)))
        return steps.names, steps.stacked()

    @property
    def hypothesis_groups(self) -> dict[str, tuple[str, ...]]:
        """Hypothesis groups (roll-ups such as "mechanical" vs "human"), name -> members;
        see :meth:`group_hypotheses`."""
        return group_members(self)

    def predictive_table(self, name: str) -> np.ndarray:
        """P(state | hypothesis, the other observed evidence) for one item, as an array
        (states x hypotheses); see :meth:`predictive_likelihoods`."""
        return dep.predictive_table(self._evidence, self._groups, self.evidence_item(name).name,
                                    len(self._hyps))

    def predictive_likelihoods(self, name: str) -> pd.DataFrame:
        """P(state | hypothesis, the other observed evidence) for one item.

        For an item with no stated dependence this is its own table. For a
        member of a joint group it is conditioned on the group's other observed
        members; for an item in a conditional chain, on the chain's other
        observed items. Value-of-information analysis uses it for pending items.
        """
        ev = self.evidence_item(name)
        return pd.DataFrame(self.predictive_table(ev.name),
                            index=pd.Index(ev.states, name="state"),
                            columns=pd.Index(self.hypothesis_names, name="hypothesis"))

    @property
    def has_dependence(self) -> bool:
        """True when some items are in a joint group or stated given another item."""
        return dep.has_dependence(self._evidence, self._groups)

    def dependence_links(self) -> dict[str, str]:
        """Item -> the stated dependence it takes part in (``"joint group 'G'"`` or
        ``"conditional chain from 'A'"``), for items that have one."""
        return dep.dependence_links(self._evidence, self._groups)

    # ------------------------------------------------------------------ listeners
    def on_change(self, callback: Callable[[Case, str], None]) -> Callable[[], None]:
        """Call ``callback(case, what)`` after every successful edit; returns an unsubscribe."""
        self._listeners.append(callback)

        def unsubscribe() -> None:
            with contextlib.suppress(ValueError):
                self._listeners.remove(callback)

        return unsubscribe

    @contextlib.contextmanager
    def _edit(self, what: str):
        """Apply an edit atomically: on any exception restore the previous state."""
        snapshot = (dict(self._hyps), dict(self._evidence), dict(self._scenarios),
                    self._active, list(self.assumptions), self.title, self.question,
                    self.analyst, self.notes, self.exhaustive, self.safety_related,
                    copy.deepcopy(self.extras), dict(self._groups))
        try:
            yield
            dep.refreshed_conditionals(self._evidence)
            self._validate()
        except BaseException:
            (self._hyps, self._evidence, self._scenarios, self._active, self.assumptions,
             self.title, self.question, self.analyst, self.notes, self.exhaustive,
             self.safety_related, self.extras, self._groups) = snapshot
            raise
        self._version += 1
        for cb in list(self._listeners):
            cb(self, what)

    def _validate(self) -> None:
        if not self._hyps:
            raise CaseError("the case has no hypotheses; add at least two")
        names = tuple(self._hyps)
        for e in self._evidence.values():
            if e.hypotheses != names:
                raise AssertionError(f"evidence '{e.name}' columns out of step with hypotheses")
        for sc in self._scenarios.values():
            if set(sc.priors) != set(names):
                raise AssertionError(f"scenario '{sc.name}' out of step with hypotheses")
        dep.validate_dependence(self._evidence, self._groups, tuple(self._hyps))

    def _record(self, kind: str, target: str, detail: str) -> None:
        self.assumptions.append({"kind": kind, "target": target, "detail": detail})

    def record_assumption(self, kind: str, target: str, detail: str) -> None:
        """Add an entry to :attr:`assumptions` (used by analyses that change numbers on
        the analyst's behalf, e.g. putting pooled expert judgements into the case)."""
        entry = [check_name("assumption kind", kind), check_text("assumption target", target),
                 check_text("assumption detail", detail)]
        with self._edit("assumptions"):
            self._record(*entry)

    # ------------------------------------------------------------------ text fields
    def set_details(self, *, title: str | None = None, question: str | None = None,
                    analyst: str | None = None, notes: str | None = None,
                    exhaustive: bool | None = None, safety_related: bool | None = None) -> None:
        """Change the case's descriptive fields."""
        with self._edit("details"):
            if title is not None:
                self.title = check_name("case title", title)
            if question is not None:
                self.question = check_text("question", question)
            if analyst is not None:
                self.analyst = check_text("analyst", analyst)
            if notes is not None:
                self.notes = check_text("notes", notes)
            if exhaustive is not None:
                self.exhaustive = check_flag("exhaustive", exhaustive)
            if safety_related is not None:
                self.safety_related = check_flag("safety_related", safety_related)

    def set_extra(self, key: str, value: Any) -> None:
        """Store a JSON-ready section in ``case.extras`` (used by analysis modules for
        their inputs, e.g. uncertainty ranges or a loss table); ``None`` removes it.
        The section is validated by the validator registered for ``key`` in
        :data:`beliefledger.case.extras.SECTIONS`, when there is one."""
        k = check_name("extras key", key)
        new = None if value is None else validate_extra(k, value, self)
        with self._edit("extras"):
            if new is None:
                self.extras.pop(k, None)
            else:
                self.extras[k] = new

    def reply(self, comment_id: str, text: str, *, who: str | None = None,
              when: str | None = None) -> None:
        """Answer a reviewer's comment (its id, e.g. ``"C1.3"``, as the record prints it).

        The reply is kept with the case (``case.extras["replies"]``), so the next
        sealed record carries it and ``beliefledger diff OLD NEW`` shows it beside the
        comment and what changed in what the comment concerns. A second reply to the
        same comment replaces the first. ``who`` defaults to ``case.analyst``;
        ``when`` to now (UTC).
        """
        from datetime import UTC, datetime

        from .extras import REPLIES

        current = dict(self.extras.get(REPLIES) or {})
        current[comment_id if isinstance(comment_id, str) else repr(comment_id)] = {
            "text": text if isinstance(text, str) else repr(text),
            "who": who if who is not None else (self.analyst or ""),
            "when": when or datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")}
        self.set_extra(REPLIES, current)

    @property
    def replies(self) -> dict[str, dict[str, str]]:
        """The replies to review comments: comment id -> {text, who, when} (a copy)."""
        from .extras import REPLIES

        return {k: dict(v) for k, v in (self.extras.get(REPLIES) or {}).items()}

    # ------------------------------------------------------------------ priors
    def set_prior(self, hypothesis: str, prior: float, *, source: Any = None,
                  rescale: bool = False) -> None:
        """Set one hypothesis' base prior.

        With ``rescale=True`` the other priors are rescaled in proportion so
        the sum stays 1 (recorded as an assumption); otherwise the sum may be
        left off 1, which the ledger reports as a ``prior-sum`` error until fixed.
        """
        h = self.hypothesis(hypothesis)
        p = check_probability(f"prior of hypothesis '{h.name}'", prior)
        src = h.source if source is None else Source.coerce(source, what=f"source of prior '{h.name}'")
        with self._edit("prior"):
            if rescale:
                rest = sum(x.prior for n, x in self._hyps.items() if n != h.name)
                if rest <= 0 and p < 1:
                    raise CaseError(
                        f"cannot rescale: the other hypotheses' priors sum to 0, so they "
                        f"cannot absorb the change of '{h.name}' to {fmt_g(p)}; set them explicitly"
                    )
                scale = (1 - p) / rest if rest > 0 else 0.0
                self._hyps = {n: (replace(x, prior=p, source=src) if n == h.name
                                  else replace(x, prior=x.prior * scale))
                              for n, x in self._hyps.items()}
                self._record("rescale-priors", BASE_SCENARIO,
                             f"prior of '{h.name}' set to {fmt_g(p)}; the others rescaled by "
                             f"{fmt_g(scale)} to keep the sum at 1")
            else:
                self._hyps[h.name] = replace(h, prior=p, source=src)

    def set_priors(self, priors: Mapping[str, float], *, source: Any = None,
                   normalize: bool = False) -> None:
        """Set all base priors at once; they must sum to 1 unless ``normalize=True``."""
        values = self._complete_priors(priors, "priors")
        total = sum(values.values())
        with self._edit("priors"):
            if abs(total - 1) > SUM_TOL:
                if not normalize:
                    raise CaseError(
                        f"priors sum to {fmt_g(total)}, not 1; fix them or pass normalize=True"
                    )
                values = {k: v / total for k, v in values.items()}
                self._record("normalize-priors", BASE_SCENARIO,
                             f"priors entered summed to {fmt_g(total)}; rescaled to sum to 1")
            new = {}
            for n, h in self._hyps.items():
                src = h.source if source is None else Source.coerce(source, what="priors source")
                new[n] = replace(h, prior=values[n], source=src)
            self._hyps = new

    def normalize_priors(self) -> None:
        """Rescale the base priors to sum to 1 (an explicit choice, recorded)."""
        total = float(self.base_priors.sum())
        if total <= 0:
            raise CaseError("priors sum to 0; set at least one positive prior before normalizing")
        with self._edit("priors"):
            if abs(total - 1) > 0:
                self._hyps = _rescaled(self._hyps, total)
                self._record("normalize-priors", BASE_SCENARIO,
                             f"priors summed to {fmt_g(total)}; rescaled to sum to 1")

    def set_hypothesis(self, name: str, *, description: str | None = None,
                       source: Any = None, catch_all: bool | None = None) -> None:
        """Change a hypothesis' description, prior source or catch-all flag."""
        h = self.hypothesis(name)
        changes: dict[str, Any] = {}
        if description is not None:
            changes["description"] = check_text(f"description of '{h.name}'", description)
        if source is not None:
            changes["source"] = Source.coerce(source, what=f"source of prior '{h.name}'")
        if catch_all is not None:
            changes["catch_all"] = bool(catch_all)
        with self._edit("hypothesis"):
            self._hyps[h.name] = replace(h, **changes)

    # ------------------------------------------------------------------ hypotheses
    def add_hypothesis(self, name: str, prior: float | None = None, *,
                       likelihoods: Mapping[str, Any] | None = None,
                       take_prior_from: str | None = None, share: float | None = None,
                       rescale: bool = False, description: str = "", source: Any = None,
                       catch_all: bool | None = None,
                       scenario_priors: Mapping[str, float] | None = None,
                       extra_values: Mapping[str, Any] | None = None,
                       group: str | None = None) -> None:
        """Add a hypothesis, saying where its prior comes from.

        * ``take_prior_from="other cause", prior=x`` (or ``share=s``): the new
          prior is carved out of that one hypothesis (usually the catch-all)
          in the hypothesis table and in every scenario: the donor gives up
          ``x`` (or the fraction ``s`` of its own prior); every other prior
          is unchanged. ``scenario_priors`` gives a different amount in a
          named scenario. Carving more than the donor has is refused.
        * ``rescale=True, prior=x``: every other prior is multiplied by
          ``1 - x`` (in each scenario by ``1 -`` its ``scenario_priors``
          entry, default ``x``). An explicit choice, recorded as an
          assumption.
        * A prior of 0 needs neither.

        Either way the choice is recorded in :attr:`assumptions`, and a
        scenario declared ``meaning="equal"`` is made equal over the new set.

        ``likelihoods`` maps every existing evidence item to this hypothesis'
        column (a list over the item's states, a dict state -> p, or a number
        for a likelihood evidence item; for a conditional item, a dict parent
        state -> column). ``extra_values`` gives the new hypothesis' entries of
        extras sections keyed by hypothesis (e.g. ``{"loss_table": {action:
        loss}}`` when the case has a loss table); ``group`` names a hypothesis
        group for it to join. Joint groups assume the new hypothesis keeps
        their items independent (covariance 0, or the product of the members'
        columns); that is recorded as an assumption.
        """
        nm = check_name("hypothesis", name)
        if nm in self._hyps:
            raise CaseError(f"hypothesis '{nm}' already exists; choose another name or edit it")
        for arg, value in (("likelihoods", likelihoods), ("scenario_priors", scenario_priors),
                           ("extra_values", extra_values)):
            if value is not None and not isinstance(value, Mapping):
                raise CaseTypeError(f"{arg} of new hypothesis '{nm}' must be a dict (evidence or "
                                    f"scenario name -> value), got {type(value).__name__}")
        rescale = check_flag("rescale", rescale)
        if scenario_priors:
            bad = [s for s in scenario_priors if s not in self._scenarios]
            if bad:
                raise CaseError(f"scenario_priors names unknown scenario(s) {bad}; the "
                                f"scenarios are {list(self._scenarios)}")
        donor = None if take_prior_from is None else self.hypothesis(take_prior_from).name
        carve = None
        if donor is not None:
            if rescale:
                raise CaseError(f"new hypothesis '{nm}': give take_prior_from= (carve its prior "
                                "out of one hypothesis) or rescale=True (shrink all the others), "
                                "not both")
            carve = rv.carved_priors(self._hyps, self._scenarios, nm, donor, prior=prior,
                                     share=share, scenario_priors=scenario_priors)
            p = carve.prior
        else:
            if share is not None:
                raise CaseError(f"share= of new hypothesis '{nm}' is a fraction of a donor's "
                                "prior; name the donor with take_prior_from=")
            if prior is None:
                raise CaseError(f"give the prior of new hypothesis '{nm}': prior=x with "
                                "take_prior_from='<hypothesis>' (carved out of it) or "
                                "rescale=True (the others shrink), or prior=0")
            p = check_probability(f"prior of hypothesis '{nm}'", prior)
            sc_given = {k: check_probability(f"prior of '{nm}' in scenario '{k}'", v)
                        for k, v in (scenario_priors or {}).items()}
            if not rescale and self._hyps and (p > 0 or any(v > 0 for v in sc_given.values())):
                donor_hint = next((h.name for h in self._hyps.values() if h.catch_all), None)
                carve_text = (f"take_prior_from={donor_hint!r} to carve it out of that "
                              "hypothesis" if donor_hint else
                              "take_prior_from='<hypothesis>' to carve it out of one hypothesis")
                raise CaseError(
                    f"new hypothesis '{nm}' has prior {fmt_g(max([p, *sc_given.values()]))}, "
                    f"which must come from the others: pass {carve_text} (the other priors "
                    f"stay as they are), or rescale=True to multiply every other prior by "
                    f"{fmt_g(1 - p)} (recorded as an assumption)")
        if p >= 1 and self._hyps:
            raise CaseError(f"prior of new hypothesis '{nm}' is {p:g}; it must be below 1 "
                            "so the others keep some belief")
        hyp = Hypothesis(nm, p, check_text("description", description),
                         Source.coerce(source, what=f"source of prior '{nm}'"),
                         is_catch_all_name(nm) if catch_all is None else bool(catch_all))
        cols = rv.parse_new_columns(self._evidence, nm, dict(likelihoods or {}))
        extra = dict(extra_values or {})
        if group is not None:
            extra[HYPOTHESIS_GROUPS] = check_name("hypothesis group", group)
        with self._edit("hypotheses"):
            order = (*self._hyps, nm)
            if carve is not None:
                self._hyps[donor] = replace(self._hyps[donor], prior=carve.donor_prior)
                self._hyps[nm] = hyp

                def sc_priors(sc: Scenario) -> dict[str, float]:
                    return {**sc.priors, donor: carve.donor_scenario_priors[sc.name],
                            nm: carve.scenario_priors[sc.name]}
                for target, detail in carve.notes:
                    self._record("carve-prior", BASE_SCENARIO if target == "base" else target,
                                 detail)
            else:
                scale = 1 - p
                self._hyps = {n: replace(h, prior=h.prior * scale) for n, h in self._hyps.items()}
                self._hyps[nm] = hyp
                if len(self._hyps) > 1 and scale != 1:
                    self._record("rescale-priors", BASE_SCENARIO,
                                 f"hypothesis '{nm}' added with prior {fmt_g(p)}; the others "
                                 f"rescaled by {fmt_g(scale)} (rescale=True)")

                def sc_priors(sc: Scenario) -> dict[str, float]:
                    q = check_probability(f"prior of '{nm}' in scenario '{sc.name}'",
                                          (scenario_priors or {}).get(sc.name, p))
                    if q > 0:
                        self._record("rescale-priors", sc.name,
                                     f"hypothesis '{nm}' added with prior {fmt_g(q)}; the others "
                                     f"rescaled by {fmt_g(1 - q)} (rescale=True)")
                    return {**{k: v * (1 - q) for k, v in sc.priors.items()}, nm: q}
            self._scenarios, kept = rv.scenarios_over(self._scenarios, order, sc_priors)
            self._record_kept_equal(kept, f"hypothesis '{nm}' added")
            self._evidence, self._groups, independent = rv.with_columns(
                self._evidence, self._groups, order,
                {**{h: h for h in order if h != nm}, nm: cols})
            dep.refreshed_conditionals(self._evidence)
            for gname in independent:
                self._record("group-independence", gname,
                             f"hypothesis '{nm}' added: the items of joint group '{gname}' are "
                             "taken as independent under it; state their dependence if known")
            self._sync_extras({}, {nm: extra or None})

    def split_hypothesis(self, name: str, into: Mapping[str, float], *,
                         likelihoods: Mapping[str, Mapping[str, Any]] | None = None,
                         description: str = "", source: Any = None,
                         extra_values: Mapping[str, Mapping[str, Any]] | None = None,
                         note: str = "") -> None:
        """Split one hypothesis into several, each taking a share of its prior.

        ``into`` maps each part to its share of the prior of ``name`` (shares
        sum to 1; include ``name`` itself to keep a part under the old name).
        In the hypothesis table and in every scenario each part gets its
        share of the old prior; the other priors are unchanged. Each part
        inherits the likelihoods of ``name`` (entry sources, conditional
        tables and joint-group dependence included) unless ``likelihoods``
        gives it its own columns (part -> {evidence: column}, as
        :meth:`add_hypothesis` takes them). The parts stay in the old one's
        hypothesis group and copy its row of a loss table unless
        ``extra_values`` (part -> {section: value}) says otherwise. The split is
        recorded as an assumption, with ``note`` (why).
        """
        h = self.hypothesis(name)
        shares = rv.check_split(h.name, into)
        parts = {check_name("hypothesis", k): v for k, v in shares.items()}
        if len(parts) != len(shares):
            raise CaseError(f"the parts of the split of '{h.name}' repeat a name: {list(into)}")
        taken = [k for k in parts if k in self._hyps and k != h.name]
        if taken:
            raise CaseError(f"cannot split '{h.name}' into {taken}: that name is taken; choose "
                            "new names (or the old one, to keep a part of it)")
        for arg, value in (("likelihoods", likelihoods), ("extra_values", extra_values)):
            if value is not None and not isinstance(value, Mapping):
                raise CaseTypeError(f"{arg} of the split of '{h.name}' must map each part to a "
                                    f"dict, got {type(value).__name__}")
        unknown = [k for k in (*(likelihoods or {}), *(extra_values or {})) if k not in parts]
        if unknown:
            raise CaseError(f"likelihoods / extra_values of the split of '{h.name}' name "
                            f"{unknown}, which are not among its parts {list(parts)}")
        sources: dict[str, Any] = {}
        for part in parts:
            given = (likelihoods or {}).get(part)
            sources[part] = h.name if given is None else rv.parse_new_columns(
                self._evidence, part, dict(given))
        src = h.source if source is None else Source.coerce(source, what="source of the split")
        order = tuple(x for n in self._hyps for x in (parts if n == h.name else (n,)))
        defaults = self._split_extras(h.name)
        added = {k: {**defaults, **dict((extra_values or {}).get(k) or {})}
                 for k in parts if k != h.name}
        why = check_text("note of the split", note)
        with self._edit("hypotheses"):
            new_h: dict[str, Hypothesis] = {}
            for n in order:
                if n not in parts:
                    new_h[n] = self._hyps[n]
                    continue
                keep = n == h.name
                new_h[n] = Hypothesis(
                    n, h.prior * parts[n],
                    h.description if keep else check_text("description", description),
                    src, h.catch_all if keep else is_catch_all_name(n))
            self._hyps = new_h

            def sc_priors(sc: Scenario) -> dict[str, float]:
                old = sc.priors[h.name]
                return {n: (old * parts[n] if n in parts else sc.priors[n]) for n in order}
            self._scenarios, kept = rv.scenarios_over(self._scenarios, order, sc_priors)
            self._record_kept_equal(kept, f"hypothesis '{h.name}' split")
            self._evidence, self._groups, independent = rv.with_columns(
                self._evidence, self._groups, order,
                {n: (sources[n] if n in parts else n) for n in order})
            dep.refreshed_conditionals(self._evidence)
            inherited = [k for k, v in sources.items() if isinstance(v, str)]
            listed = ", ".join(f"'{k}' ({fmt_g(v)} of it: prior {fmt_g(h.prior * v)})"
                               for k, v in parts.items())
            self._record("split-hypothesis", h.name,
                         f"hypothesis '{h.name}' (prior {fmt_g(h.prior)}) split into {listed}, "
                         "in every scenario by the same shares; the other priors unchanged; "
                         + (f"the likelihoods of '{h.name}' inherited by {inherited}"
                            if inherited else "every part has likelihoods of its own")
                         + (f"; {why}" if why else ""))
            for gname in independent:
                self._record("group-independence", gname,
                             f"hypothesis '{h.name}' split: the items of joint group '{gname}' "
                             "are taken as independent under the parts given new likelihoods")
            self._sync_extras({} if h.name in parts else {h.name: None}, added)

    def _split_extras(self, name: str) -> dict[str, Any]:
        """What a part of a split hypothesis takes over in the extras sections keyed by
        hypothesis: the old one's loss-table row and its hypothesis group."""
        out: dict[str, Any] = {}
        loss = self.extras.get("loss_table")
        if loss:
            out["loss_table"] = {a: row[name] for a, row in loss["table"].items() if name in row}
        for g, members in self.hypothesis_groups.items():
            if name in members:
                out[HYPOTHESIS_GROUPS] = g
        return out

    def _record_kept_equal(self, names: list[str], what: str) -> None:
        for sname in names:
            self._record("scenario-kept-equal", sname,
                         f"{what}: scenario '{sname}' is declared equal priors, so it gives "
                         f"each of the {len(self._hyps)} hypotheses {fmt_g(1 / len(self._hyps))}")

    def remove_hypothesis(self, name: str, *, give_prior_to: str | None = None) -> None:
        """Remove a hypothesis. Its prior goes to ``give_prior_to`` (in every scenario; the
        others keep theirs), or by default the remaining priors are rescaled to sum to 1.
        Either way it is recorded; an ``"equal"`` scenario stays equal."""
        h = self.hypothesis(name)
        if len(self._hyps) <= 1:
            raise CaseError(f"cannot remove '{h.name}': it is the only hypothesis")
        heir = None
        if give_prior_to is not None:
            heir = self.hypothesis(give_prior_to).name
            if heir == h.name:
                raise CaseError(f"give_prior_to names '{h.name}' itself; name another hypothesis")
        rest = 1 - h.prior
        if heir is None and sum(x.prior for n, x in self._hyps.items() if n != h.name) <= 0:
            raise CaseError(f"cannot remove '{h.name}': the other hypotheses all have prior 0")
        with self._edit("hypotheses"):
            del self._hyps[h.name]
            order = tuple(self._hyps)
            if heir is not None:
                self._hyps[heir] = replace(self._hyps[heir],
                                           prior=self._hyps[heir].prior + h.prior)
                self._record("give-prior", BASE_SCENARIO,
                             f"hypothesis '{h.name}' (prior {fmt_g(h.prior)}) removed; its prior "
                             f"given to '{heir}'; the other priors unchanged")
            else:
                total = sum(x.prior for x in self._hyps.values())
                self._hyps = _rescaled(self._hyps, total)
                self._record("rescale-priors", BASE_SCENARIO,
                             f"hypothesis '{h.name}' (prior {fmt_g(h.prior)}) removed; the others "
                             f"rescaled by {fmt_g(1 / rest) if rest > 0 else 'n/a'}")

            def sc_priors(sc: Scenario) -> dict[str, float]:
                pri = {k: v for k, v in sc.priors.items() if k != h.name}
                if heir is not None:
                    pri[heir] += sc.priors[h.name]
                    return pri
                t = sum(pri.values())
                if t <= 0:
                    raise CaseError(f"cannot remove '{h.name}': in scenario '{sc.name}' the other "
                                    "hypotheses all have prior 0")
                return {k: v / t for k, v in pri.items()}
            self._scenarios, kept = rv.scenarios_over(self._scenarios, order, sc_priors)
            self._record_kept_equal(kept, f"hypothesis '{h.name}' removed")
            self._evidence, self._groups, _ = rv.with_columns(
                self._evidence, self._groups, order, {n: n for n in order})
            self._sync_extras({h.name: None}, {})

    def rename_hypothesis(self, old: str, new: str) -> None:
        """Rename a hypothesis everywhere (evidence tables, scenarios)."""
        h = self.hypothesis(old)
        nm = check_name("hypothesis", new)
        if nm == h.name:
            return
        if nm in self._hyps:
            raise CaseError(f"cannot rename '{h.name}' to '{nm}': that name is taken")
        with self._edit("hypotheses"):
            self._hyps = {(nm if n == h.name else n): (replace(x, name=nm) if n == h.name else x)
                          for n, x in self._hyps.items()}
            for sname, sc in self._scenarios.items():
                self._scenarios[sname] = replace(
                    sc, priors={(nm if k == h.name else k): v for k, v in sc.priors.items()},
                    basis=tuple(nm if k == h.name else k for k in sc.basis))
            names = tuple(self._hyps)
            for ename, ev in self._evidence.items():
                self._evidence[ename] = ev.replace(
                    hypotheses=names,
                    entry_sources={(s, nm if hh == h.name else hh): v
                                   for (s, hh), v in ev.entry_sources.items()})
            for gname, g in self._groups.items():
                self._groups[gname] = g.replace(hypotheses=names)
            self._sync_extras({h.name: nm}, {})

    def group_hypotheses(self, group: str, members: Iterable[str], *, note: str = "") -> None:
        """Name a group of hypotheses for roll-ups ("mechanical" vs "human").

        Nothing is merged: the members stay separate hypotheses, and the
        group's probability is the sum of theirs at every step
        (``ledger.group_posterior``, ``ledger.group_steps``, a waterfall with
        ``focus=group``). A hypothesis belongs to one group at most. Merging
        two hypotheses' tables into one is not exact (the merged likelihood
        would be weighted by beliefs that change with every item); a group is.
        """
        nm = check_name("hypothesis group", group)
        if isinstance(members, str) or not isinstance(members, Iterable):
            raise CaseTypeError(f"members of hypothesis group '{nm}' must be a list of "
                                f"hypothesis names, got {type(members).__name__} {members!r:.60}")
        mem = [self.hypothesis(m).name for m in members]
        groups = [dict(g) for g in (self.extras.get(HYPOTHESIS_GROUPS) or {}).get("groups", [])]
        if any(g["name"] == nm for g in groups):
            raise CaseError(f"hypothesis group '{nm}' already exists; remove it first with "
                            "case.ungroup_hypotheses, or choose another name")
        groups.append({"name": nm, "members": mem, "note": check_text("note", note)})
        value = validate_extra(HYPOTHESIS_GROUPS, {"groups": groups}, self)
        with self._edit("hypothesis groups"):
            self.extras[HYPOTHESIS_GROUPS] = value
            self._record("hypothesis-group", nm,
                         f"hypotheses {mem} read together as group '{nm}' (its probability is "
                         "the sum of theirs; nothing merged)" + (f"; {note}" if note else ""))

    def ungroup_hypotheses(self, group: str) -> None:
        """Remove a hypothesis group (its members are untouched)."""
        groups = (self.extras.get(HYPOTHESIS_GROUPS) or {}).get("groups", [])
        lookup("hypothesis group", "hypothesis groups", {g["name"]: g for g in groups}, group)
        rest = [g for g in groups if g["name"] != group]
        with self._edit("hypothesis groups"):
            if rest:
                self.extras[HYPOTHESIS_GROUPS] = {"groups": rest}
            else:
                self.extras.pop(HYPOTHESIS_GROUPS, None)

    # ------------------------------------------------------------------ evidence
    def add_evidence(self, name: str, *, likelihoods: Any, states: Iterable[str] | None = None,
                     observed: str | None = None, source: Any = None, description: str = "",
                     shared_source: str | None = None, likelihood_evidence: bool = False,
                     normalize: bool = False) -> Evidence:
        """Add an evidence item with its likelihood table P(state | hypothesis).

        ``likelihoods`` may be a dict hypothesis -> list over ``states``, a dict
        hypothesis -> {state: p}, a DataFrame (states as rows, hypotheses as
        columns) or the path of a CSV file in that layout (first column: the
        states). With ``likelihood_evidence=True``, give P(observed state | H) per
        hypothesis (dict hypothesis -> number); ``observed`` names the state and
        the numbers need not sum to 1.
        """
        if isinstance(name, str) and name.strip() in self._groups:
            raise CaseError(f"'{name.strip()}' is the name of a joint group; evidence and groups "
                            "share the step names, so choose another name")
        ev = self._build_evidence(name, likelihoods=likelihoods, states=states, observed=observed,
                                  source=source, description=description,
                                  shared_source=shared_source, likelihood_evidence=likelihood_evidence,
                                  normalize=normalize)
        with self._edit("evidence"):
            if normalize and not likelihood_evidence:
                self._record("normalize-likelihoods", ev.name,
                             "likelihood columns rescaled to sum to 1 over the states")
            self._evidence[ev.name] = ev
        return ev

    def _build_evidence(self, name, *, likelihoods, states, observed, source, description,
                        shared_source, likelihood_evidence, normalize,
                        replacing: bool = False) -> Evidence:
        nm = check_name("evidence", name)
        if nm in self._evidence and not replacing:
            raise CaseError(f"evidence '{nm}' already exists; choose another name or edit it")
        hyps = tuple(self._hyps)
        if likelihood_evidence:
            if observed is None:
                raise CaseError(f"evidence '{nm}' is likelihood_evidence, so name its observed state "
                                "with observed='...'")
            obs = check_name(f"observed state of '{nm}'", observed)
            if states is not None and list(states) not in ([obs], []):
                raise CaseError(f"evidence '{nm}' is likelihood_evidence: give only the observed state")
            if isinstance(likelihoods, pd.Series):
                likelihoods = likelihoods.to_dict()
            if not isinstance(likelihoods, Mapping):
                raise CaseTypeError(f"likelihoods of likelihood evidence evidence '{nm}' must map each "
                                    "hypothesis to P(observed | hypothesis)")
            check_keys(nm, likelihoods, hyps)
            row = []
            for h in hyps:
                v = likelihoods[h]
                if isinstance(v, list | tuple) and len(v) == 1:
                    v = v[0]
                row.append(check_probability(f"likelihood of '{obs}' for evidence '{nm}' "
                                              f"under hypothesis '{h}'", v))
            table = np.array([row])
            st = (obs,)
        else:
            st, table = parse_table(nm, likelihoods, states, hyps)
            sums = table.sum(axis=0)
            for j, h in enumerate(hyps):
                if abs(sums[j] - 1) > SUM_TOL:
                    if normalize and sums[j] > 0:
                        continue
                    raise CaseError(
                        f"likelihoods of evidence '{nm}' for hypothesis '{h}' sum to "
                        f"{sums[j]:.4g} over its states (want 1 within {SUM_TOL:g}); fix the "
                        "column, pass normalize=True, or declare the evidence with likelihood_evidence=True"
                    )
            if normalize:
                table = table / sums
            if observed is not None:
                obs = observed if isinstance(observed, str) else observed
                if obs not in st:
                    raise CaseError(f"observed state {obs!r} of evidence '{nm}' is not among its "
                                    f"states {list(st)}")
        tag = None
        if shared_source is not None:
            tag = check_name(f"shared-source tag of '{nm}'", shared_source)
        return Evidence(nm, st, hyps, table, observed=observed,
                        description=check_text("description", description),
                        source=Source.coerce(source, what=f"source of evidence '{nm}'"),
                        shared_source=tag, likelihood_evidence=bool(likelihood_evidence))

    def remove_evidence(self, name: str) -> None:
        ev = self.evidence_item(name)
        g = dep.group_of(self._groups).get(ev.name)
        if g is not None:
            raise CaseError(f"evidence '{ev.name}' is in joint group '{g}'; remove the group "
                            "first (remove_joint_group)")
        kids = [e.name for e in self._evidence.values() if e.given == ev.name]
        if kids:
            raise CaseError(f"evidence {short_list(kids)} is stated given '{ev.name}'; remove "
                            "that conditional evidence first")
        with self._edit("evidence"):
            del self._evidence[ev.name]

    def rename_evidence(self, old: str, new: str) -> None:
        ev = self.evidence_item(old)
        nm = check_name("evidence", new)
        if nm == ev.name:
            return
        if nm in self._evidence or nm in self._groups:
            raise CaseError(f"cannot rename evidence '{ev.name}' to '{nm}': that name is taken")
        with self._edit("evidence"):
            self._evidence = {(nm if k == ev.name else k): (v.replace(name=nm) if k == ev.name
                                                             else v)
                              for k, v in self._evidence.items()}
            for k, v in self._evidence.items():
                if v.given == ev.name:
                    self._evidence[k] = v.replace(given=nm)
            for gname, g in self._groups.items():
                if ev.name in g.members:
                    self._groups[gname] = g.replace(
                        members=tuple(nm if m == ev.name else m for m in g.members))

    def set_evidence(self, name: str, *, description: str | None = None, source: Any = None,
                     shared_source: str | None | bool = False) -> None:
        """Change an item's description, source, or shared-source tag (``None`` clears it)."""
        ev = self.evidence_item(name)
        changes: dict[str, Any] = {}
        if description is not None:
            changes["description"] = check_text(f"description of '{ev.name}'", description)
        if source is not None:
            changes["source"] = Source.coerce(source, what=f"source of evidence '{ev.name}'")
        if shared_source is not False:
            changes["shared_source"] = (None if shared_source is None else
                                        check_name(f"shared-source tag of '{ev.name}'",
                                                    shared_source))
        with self._edit("evidence"):
            self._evidence[ev.name] = ev.replace(**changes)

    # ------------------------------------------------------------------ artefacts
    def attach(self, evidence: str, path: str | Path, *, note: str = "", who: str | None = None,
               copy_to: str | Path | None = None) -> Artefact:
        """Record a file the evidence item rests on: its name, size and SHA-256, who
        attached it and when (UTC). The file is not copied unless ``copy_to`` names a
        folder to copy it into; ``beliefledger verify SEALED --artefacts DIR`` later
        checks the files in DIR against these digests.

        Parameters
        ----------
        evidence : str
            The evidence item the file supports.
        path : path
            The file (a photograph, a log extract, a laboratory report ...).
        note : str
            What the file is, where the original is kept.
        who : str, optional
            Who attaches it (default: the case's analyst; one of them is required).
        copy_to : path, optional
            A folder to copy the file into (made through a temporary file and a
            rename; an identical file of that name already there is reused, a
            different one refused).

        A refused attach (unknown item, missing file, a different file of the same
        name already attached) changes nothing. Returns the :class:`Artefact`.
        """
        ev = self.evidence_item(evidence)
        by = self.analyst if who is None else who
        if not isinstance(by, str) or not by.strip():
            raise CaseError(f"say who attaches the file to evidence '{ev.name}': pass who='...' "
                            "(or set the case's analyst with set_details(analyst=...))")
        art, made = make_artefact(path, ev.name, who=by, note=note, copy_to=copy_to)
        try:
            for other in self._evidence.values():
                for a in other.artefacts:
                    if a.name != art.name:
                        continue
                    if a.sha256 != art.sha256:
                        raise CaseError(
                            f"a different file named {art.name!r} is already attached to "
                            f"evidence '{other.name}' (SHA-256 {a.sha256[:16]}...); files are "
                            "checked by name in one folder, so rename this one before attaching")
                    if other.name == ev.name:
                        raise CaseError(f"{art.name!r} is already attached to evidence "
                                        f"'{ev.name}' (attached by {a.who} at {a.when})")
            with self._edit("artefacts"):
                self._evidence[ev.name] = ev.replace(artefacts=(*ev.artefacts, art))
        except BaseException:
            if made is not None:  # the refused attach leaves no copy behind either
                made.unlink(missing_ok=True)
            raise
        return art

    def detach(self, evidence: str, name: str) -> None:
        """Remove the artefact called ``name`` (a file name) from an evidence item."""
        ev = self.evidence_item(evidence)
        kept = tuple(a for a in ev.artefacts if a.name != name)
        if len(kept) == len(ev.artefacts):
            raise CaseError(f"evidence '{ev.name}' has no artefact {name!r}; its artefacts are "
                            f"{short_list(a.name for a in ev.artefacts)}")
        with self._edit("artefacts"):
            self._evidence[ev.name] = ev.replace(artefacts=kept)

    @property
    def artefacts(self) -> pd.DataFrame:
        """Every artefact, one row each, in evidence order: evidence, file, bytes, sha256,
        who, when (UTC), note, copy."""
        rows = [{"evidence": ev.name, "file": a.name, "bytes": a.size, "sha256": a.sha256,
                 "who": a.who, "when": a.when, "note": a.note, "copy": a.copy}
                for ev in self._evidence.values() for a in ev.artefacts]
        return pd.DataFrame(rows, columns=["evidence", "file", "bytes", "sha256", "who", "when",
                                           "note", "copy"])

    def observe(self, evidence: str, state: str | None = None, *,
                likelihood: Mapping[str, float] | None = None,
                probability: Mapping[str, float] | None = None, source: Any = None,
                note: str = "") -> None:
        """Record what was observed of an evidence item.

        * ``observe(item, state)``: the state was seen for certain (``None``:
          pending, not observed yet).
        * ``observe(item, likelihood={state: weight, ...})``: an uncertain
          report, as the relative chance of the report given each true state
          (virtual evidence). Only the ratios of the weights matter; weights
          ``{s: 1, others: 0}`` are the plain observation of ``s``.
        * ``observe(item, probability={state: p, ...})``: the analyst's
          probability of each state after the observation (Jeffrey's rule),
          applied at the item's place in the sequence. Such updates do not
          commute: the ledger says where each sits, and the
          ``order-sensitive`` flag says when moving it would change the MAP.

        ``source`` says who gave the report, when, and why it is weighted so
        (a :class:`Source`, like every other number); ``note`` adds detail.
        An uncertain observation is recorded in :attr:`assumptions`. For a
        witness or instrument of known reliability use :meth:`observe_report`.

        References
        ----------
        Pearl (1988), *Probabilistic Reasoning in Intelligent Systems*, section
        2.2.2; Jeffrey (1965), *The Logic of Decision*; Chan & Darwiche (2005),
        *Artificial Intelligence* 163 (all recalled from memory).
        """
        ev = self.evidence_item(evidence)
        given = [k for k, v in (("state", state), ("likelihood", likelihood),
                                ("probability", probability)) if v is not None]
        if len(given) > 1:
            raise CaseError(f"observe '{ev.name}' with one of a state, likelihood= or "
                            f"probability=, not {' and '.join(given)}")
        if likelihood is None and probability is None:
            if source is not None or note:
                raise CaseError(f"source= and note= of an observation of '{ev.name}' describe an "
                                "uncertain report; for a state seen for certain set the item's "
                                "source with set_evidence")
            if state is not None:
                if not isinstance(state, str):
                    raise CaseTypeError(f"observed state of '{ev.name}' must be a string, got "
                                        f"{type(state).__name__} {state!r:.60}")
                if state not in ev.states:
                    raise CaseError(f"observed state {state!r} of evidence '{ev.name}' is not "
                                    f"among its states {list(ev.states)}; pick one of them or None")
            with self._edit("observed"):
                self._evidence[ev.name] = ev.replace(observed=state)
            return
        form = LIKELIHOOD_FORM if likelihood is not None else PROBABILITY_FORM
        unc = UncertainObservation(
            form, self._uncertain_weights(ev, likelihood if likelihood is not None
                                          else probability, form),
            Source.coerce(source, what=f"source of the observation of '{ev.name}'"),
            note=check_text(f"note of the observation of '{ev.name}'", note))
        self._set_uncertain(ev, unc)

    def observe_report(self, evidence: str, reported: str, reliability: float, *,
                       source: Any = None, note: str = "") -> None:
        """Observe an item through a witness or instrument right with probability r.

        A report of state ``reported`` on an item of k states is entered as
        the likelihood form it produces: weight r for the reported state and
        (1 - r) / (k - 1) for each other state (the chance of that report were
        the other state true), as :func:`beliefledger.case.uncertain.report_weights`
        gives. ``source`` says who reported, when, and why r is what it is.

        Examples
        --------
        ``case.observe_report("smell location", "machine room", 0.8, source={"where":
        "night operator's statement", "who": "shift lead", "why": "fairly sure"})``
        equals ``case.observe("smell location", likelihood={"machine room": 0.8,
        "office": 0.1, "dock": 0.1}, ...)`` on a three-state item.
        """
        ev = self.evidence_item(evidence)
        weights = report_weights(ev.states, reported, reliability)
        unc = UncertainObservation(
            LIKELIHOOD_FORM, self._uncertain_weights(ev, weights, LIKELIHOOD_FORM),
            Source.coerce(source, what=f"source of the report on '{ev.name}'"),
            reported=reported, reliability=float(reliability),
            note=check_text(f"note of the report on '{ev.name}'", note))
        self._set_uncertain(ev, unc)

    def _uncertain_weights(self, ev: Evidence, spec: Any, form: str) -> tuple[float, ...]:
        if ev.likelihood_evidence:
            raise CaseError(f"evidence '{ev.name}' is likelihood evidence (one observed state "
                            "with relative weights per hypothesis); an uncertain observation "
                            "needs an item with its full table over the states: add the item "
                            "with its states and likelihoods, then observe it")
        links = self.dependence_links()
        if ev.name in links:
            raise CaseError(f"evidence '{ev.name}' is in a stated dependence ({links[ev.name]}); "
                            "an uncertain observation enters as a step of its own, so it "
                            "cannot be combined with a joint group or a conditional chain: "
                            "observe a state, or drop the dependence first")
        return parse_weights(ev.name, ev.states, spec, form)

    def _set_uncertain(self, ev: Evidence, unc: UncertainObservation) -> None:
        w = ", ".join(f"'{s}' {fmt_g(x)}" for s, x in zip(ev.states, unc.weights, strict=True))
        by = f"; given by {unc.source}" if unc.source.is_sourced else "; unsourced"
        if unc.form == LIKELIHOOD_FORM:
            head = (f"report '{unc.reported}' from a witness or instrument right with "
                    f"probability {fmt_g(unc.reliability)}: " if unc.reported is not None else "")
            detail = (f"{head}likelihood form (virtual evidence): relative chance of the report "
                      f"given each true state {w}; only their ratios matter")
        else:
            detail = (f"probability form (Jeffrey's rule): probability of each state after the "
                      f"observation {w}; applied at the item's place in the sequence through "
                      "the equivalent likelihood weights q(state) / P(state | the evidence "
                      "before it); such updates do not commute, so moving the item changes "
                      "the result")
        with self._edit("observed"):
            self._evidence[ev.name] = ev.replace(observed=None, uncertain=unc)
            self._record("uncertain-observation", ev.name, detail + by
                         + (f"; {unc.note}" if unc.note else ""))

    def set_likelihood(self, evidence: str, hypothesis: str, value: Any, *,
                       state: str | None = None, source: Any = None,
                       normalize: bool = False) -> None:
        """Set likelihoods of one hypothesis for an evidence item.

        With ``state`` given, ``value`` is the single entry P(state | hypothesis);
        the column may then no longer sum to 1 (a ``column-sum`` error flag
        until it is fixed). Without ``state``, ``value`` is the whole column (a
        list over the states or a dict state -> p) and must sum to 1 unless
        ``normalize=True`` or the item is likelihood evidence.
        """
        ev = self.evidence_item(evidence)
        h = self.hypothesis(hypothesis)
        _refuse_conditional_edit(ev)
        j = ev.hypotheses.index(h.name)
        table = np.array(ev.table)
        entry_sources = dict(ev.entry_sources)
        src = None if source is None else Source.coerce(
            source, what=f"source of likelihood of '{ev.name}' under '{h.name}'")
        if state is not None:
            i = ev.state_index(state)
            table[i, j] = check_probability(
                f"likelihood of state {state!r} of evidence '{ev.name}' under hypothesis "
                f"'{h.name}'", value)
            if src is not None:
                entry_sources[(state, h.name)] = src
        else:
            col = parse_column(ev, h.name, value)
            s = col.sum()
            if not ev.likelihood_evidence and abs(s - 1) > SUM_TOL:
                if not normalize or s <= 0:
                    raise CaseError(
                        f"likelihoods of evidence '{ev.name}' for hypothesis '{h.name}' sum to "
                        f"{s:.4g} over its states (want 1 within {SUM_TOL:g}); fix the column "
                        "or pass normalize=True")
                col = col / s
            table[:, j] = col
            if src is not None:
                for st in ev.states:
                    entry_sources[(st, h.name)] = src
        with self._edit("likelihood"):
            if state is None and normalize and not ev.likelihood_evidence:
                self._record("normalize-likelihoods", ev.name,
                             f"column of '{h.name}' rescaled to sum to 1")
            self._evidence[ev.name] = ev.replace(table=table, entry_sources=entry_sources)

    def set_likelihoods(self, evidence: str, likelihoods: Any, *, source: Any = None,
                        normalize: bool = False) -> None:
        """Replace an item's whole likelihood table (same states; e.g. imported from CSV)."""
        ev = self.evidence_item(evidence)
        _refuse_conditional_edit(ev)
        if ev.likelihood_evidence:
            new = self._build_evidence(ev.name, replacing=True, likelihoods=likelihoods, states=None,
                                       observed=ev.observed, source=None, description="",
                                       shared_source=None, likelihood_evidence=True, normalize=False)
        else:
            new = self._build_evidence(ev.name, replacing=True, likelihoods=likelihoods, states=None,
                                       observed=None, source=None, description="",
                                       shared_source=None, likelihood_evidence=False,
                                       normalize=normalize)
        if new.states != ev.states:
            if set(new.states) == set(ev.states):
                order = [new.states.index(s) for s in ev.states]
                new = new.replace(table=new.table[order], states=ev.states)
            else:
                raise CaseError(f"new table for evidence '{ev.name}' has states "
                                f"{list(new.states)}; the item's states are {list(ev.states)}")
        with self._edit("likelihood"):
            if normalize:
                self._record("normalize-likelihoods", ev.name,
                             "imported columns rescaled to sum to 1")
            changes: dict[str, Any] = {"table": new.table, "entry_sources": {}}
            if source is not None:
                changes["source"] = Source.coerce(source, what=f"source of evidence '{ev.name}'")
            self._evidence[ev.name] = ev.replace(**changes)

    # ------------------------------------------------------------------ dependent evidence
    @property
    def joint_groups(self) -> dict[str, JointGroup]:
        """Joint evidence groups in order, name -> :class:`JointGroup` (a copy of the mapping)."""
        return dict(self._groups)

    def add_joint_group(self, name: str, members: Iterable[str], *, covariance: Any = None,
                        correlation: Any = None, joint: Any = None, source: Any = None,
                        note: str = "") -> JointGroup:
        """Join evidence items whose states are not independent given the hypothesis.

        The observed members then enter the update as one step (named ``name``)
        whose likelihood is the joint table at their observed states.

        Parameters
        ----------
        name : str
            Name of the group (and of its update step); distinct from every
            evidence item's name.
        members : list of str
            Existing evidence items with full tables (not likelihood evidence).
        covariance : float or mapping hypothesis -> float, optional
            For two items of two states each: Cov(1[A = a1], 1[B = b1] | H),
            where a1 and b1 are each item's *first* state, so that
            P(a1, b1 | H) = P(a1 | H)·P(b1 | H) + cov. One number applies to
            every hypothesis. It must lie in
            [-min(P(a1)P(b1), P(a2)P(b2)), min(P(a1)P(b2), P(a2)P(b1))] under
            each hypothesis (all four cells non-negative).
        correlation : float or mapping, optional
            The same as a correlation coefficient rho in [-1, 1]:
            cov = rho·sqrt(P(a1)P(a2)P(b1)P(b2)) (the phi coefficient of the
            two indicators).
        joint : DataFrame or mapping, optional
            The whole joint table: a DataFrame whose rows are the combined states
            (a MultiIndex, one level per member, or tuples) and whose columns are
            the hypotheses; or a mapping hypothesis -> {tuple of states: p} or
            hypothesis -> list of p in row-major order of the combined states
            (last member fastest). Each column sums to 1 and its margins equal
            the members' tables.
        source : Source, str or dict, optional
            Where the dependence figures came from.
        note : str
            Why the items are dependent.

        References
        ----------
        The covariance form of two dependent binary tests: Gardner, Stryhn,
        Lind & Collins (2000), "Conditional dependence between tests affects
        the diagnosis and surveillance of animal diseases", *Preventive
        Veterinary Medicine* 45, 107-122 (recalled from memory).
        """
        nm = check_name("joint group", name)
        if nm in self._groups:
            raise CaseError(f"joint group '{nm}' already exists; remove it first or choose "
                            "another name")
        if isinstance(members, str) or not isinstance(members, Iterable):
            raise CaseTypeError(f"members of joint group '{nm}' must be a list of evidence "
                                f"names, got {type(members).__name__} {members!r:.60}")
        mem = tuple(self.evidence_item(m).name for m in members)
        given = [x is not None for x in (covariance, correlation, joint)]
        if sum(given) != 1:
            raise CaseError(f"joint group '{nm}': give exactly one of covariance=, "
                            "correlation= or joint= (a covariance of 0 means independence)")
        hyps = tuple(self._hyps)
        cov = jt = None
        if joint is not None:
            jt = parse_joint(nm, joint, [self._evidence[m] for m in mem], hyps)
        else:
            if len(mem) != 2:
                raise CaseError(f"joint group '{nm}' has {len(mem)} items; a covariance or "
                                "correlation joins exactly two two-state items (give a joint "
                                "table for more)")
            raw = covariance if covariance is not None else correlation
            label = "covariance" if covariance is not None else "correlation"
            vals = per_hypothesis(f"{label} of joint group '{nm}'", raw, hyps)
            if label == "correlation":
                a, b = (self._evidence[m] for m in mem)
                for ev in (a, b):
                    if len(ev.states) != 2:
                        raise CaseError(f"joint group '{nm}': a correlation needs two-state "
                                        f"items; '{ev.name}' has states {list(ev.states)}")
                for j, h in enumerate(hyps):
                    if not -1 <= vals[j] <= 1:
                        raise CaseError(f"correlation {vals[j]:g} of joint group '{nm}' under "
                                        f"'{h}' is outside [-1, 1]")
                vals = vals * np.sqrt(a.table[0] * a.table[1] * b.table[0] * b.table[1])
            cov = vals
        grp = JointGroup(nm, mem, hyps, covariance=cov, joint=jt,
                         source=Source.coerce(source, what=f"source of joint group '{nm}'"),
                         note=check_text(f"note of joint group '{nm}'", note))
        with self._edit("joint groups"):
            self._groups[nm] = grp
        return grp

    def remove_joint_group(self, name: str) -> None:
        """Remove a joint group; its members go back to being independent items."""
        g = self.joint_group(name)
        with self._edit("joint groups"):
            del self._groups[g.name]

    def joint_table(self, name: str) -> pd.DataFrame:
        """The joint likelihood table of a group: rows the combined states (one index
        level per member), columns the hypotheses."""
        g = self.joint_group(name)
        arr = g.joint_array(self._evidence)
        idx = pd.MultiIndex.from_product([self._evidence[m].states for m in g.members],
                                         names=list(g.members))
        return pd.DataFrame(arr.reshape(-1, len(g.hypotheses)), index=idx,
                            columns=pd.Index(g.hypotheses, name="hypothesis"))

    def add_conditional_evidence(self, name: str, *, given: str, likelihoods: Mapping[str, Any],
                                 states: Iterable[str] | None = None, observed: str | None = None,
                                 source: Any = None, description: str = "",
                                 shared_source: str | None = None) -> Evidence:
        """Add an item whose likelihood is stated given the state of an earlier item.

        ``likelihoods`` maps each state of the parent item ``given`` to a table
        P(state | parent state, hypothesis) in any form :meth:`add_evidence`
        accepts. The item's own table (``Evidence.table``) becomes its margin
        over the parent, sum_s P(state | s, H)·P(s | H), kept in step with the
        parent's table. In the update, the item contributes the row for the
        parent's observed state; when the parent is not observed, the parent's
        state is summed out.
        """
        nm = check_name("evidence", name)
        if nm in self._evidence or nm in self._groups:
            raise CaseError(f"evidence '{nm}' already exists; choose another name or edit it")
        parent = self.evidence_item(given)
        st, cond = self._parse_conditional(nm, parent, likelihoods, states)
        if observed is not None and observed not in st:
            raise CaseError(f"observed state {observed!r} of evidence '{nm}' is not among its "
                            f"states {list(st)}")
        tag = None if shared_source is None else check_name(f"shared-source tag of '{nm}'",
                                                             shared_source)
        ev = Evidence(nm, st, tuple(self._hyps), np.einsum("psh,ph->sh", cond, parent.table),
                      observed=observed, description=check_text("description", description),
                      source=Source.coerce(source, what=f"source of evidence '{nm}'"),
                      shared_source=tag, given=parent.name, parent_states=parent.states,
                      conditional=cond)
        with self._edit("evidence"):
            self._evidence[nm] = ev
        return ev

    def set_conditional_likelihoods(self, evidence: str, likelihoods: Mapping[str, Any], *,
                                    source: Any = None) -> None:
        """Replace all the tables of a conditional item (one per parent state)."""
        ev = self.evidence_item(evidence)
        if ev.given is None:
            raise CaseError(f"evidence '{ev.name}' is not conditional; edit its table with "
                            "set_likelihoods, or add it with add_conditional_evidence")
        st, cond = self._parse_conditional(ev.name, self._evidence[ev.given], likelihoods,
                                           ev.states)
        changes: dict[str, Any] = {"conditional": cond}
        if source is not None:
            changes["source"] = Source.coerce(source, what=f"source of evidence '{ev.name}'")
        with self._edit("likelihood"):
            self._evidence[ev.name] = ev.replace(**changes)

    def _parse_conditional(self, nm: str, parent: Evidence, likelihoods: Any,
                           states: Iterable[str] | None) -> tuple[tuple[str, ...], np.ndarray]:
        if parent.likelihood_evidence:
            raise CaseError(f"evidence '{nm}' cannot be stated given '{parent.name}': that item "
                            "is likelihood evidence, and a parent needs a full table over its states")
        if not isinstance(likelihoods, Mapping):
            raise CaseTypeError(f"likelihoods of conditional evidence '{nm}' must map each state "
                                f"of '{parent.name}' {list(parent.states)} to a table, got "
                                f"{type(likelihoods).__name__}")
        miss = [s for s in parent.states if s not in likelihoods]
        extra = [s for s in likelihoods if s not in parent.states]
        if miss or extra:
            raise CaseError(f"likelihoods of conditional evidence '{nm}': missing state(s) "
                            f"{miss} and unknown state(s) {extra} of '{parent.name}'; give one "
                            f"table for each of {list(parent.states)}")
        hyps = tuple(self._hyps)
        st = None if states is None else tuple(states)
        tables = []
        for ps in parent.states:
            label = f"{nm} | {parent.name} = {ps}"
            st_i, tab = parse_table(label, likelihoods[ps], st, hyps)
            if st is None:
                st = st_i
            elif st_i != st:
                raise CaseError(f"tables of conditional evidence '{nm}' list different states: "
                                f"{list(st)} and {list(st_i)}")
            sums = tab.sum(axis=0)
            for j, h in enumerate(hyps):
                if abs(sums[j] - 1) > SUM_TOL:
                    raise CaseError(
                        f"likelihoods of evidence '{label}' for hypothesis '{h}' sum to "
                        f"{sums[j]:.4g} over its states (want 1 within {SUM_TOL:g}); fix the "
                        "column")
            tables.append(tab)
        return st, np.stack(tables)

    def _sync_extras(self, renamed: Mapping[str, str | None],
                     added: Mapping[str, Mapping[str, Any] | None]) -> None:
        """Keep extras sections that are keyed by hypothesis in step with a change of the
        hypothesis set (hooks registered in :data:`beliefledger.case.extras.SECTIONS`)."""
        for key in list(self.extras):
            value = hypotheses_changed(key, self.extras[key], self, renamed, added)
            if value is None:
                del self.extras[key]
            else:
                self.extras[key] = value
        for h, given in added.items():
            if isinstance(given, Mapping) and given.get(HYPOTHESIS_GROUPS) is not None \
                    and HYPOTHESIS_GROUPS not in self.extras:
                raise CaseError(f"new hypothesis '{h}' is to join hypothesis group "
                                f"{given[HYPOTHESIS_GROUPS]!r:.60}, but the case has no groups; "
                                "make it with case.group_hypotheses first")

    # ------------------------------------------------------------------ scenarios
    def add_scenario(self, name: str, priors: Mapping[str, float] | None = None, *,
                     source: Any = None, note: str = "", normalize: bool = False,
                     replace_existing: bool = False, meaning: str | None = None) -> None:
        """Add a named set of priors (must cover every hypothesis and sum to 1).

        ``meaning`` declares what the priors are: ``None`` or ``""`` (the
        numbers as stated), ``"equal"`` (equal priors; ``priors`` may be left
        out, and the scenario stays equal when hypotheses are added, split or
        removed) or ``"data"`` (taken from the data set ``source`` names, for
        the hypotheses the case has now; when the hypothesis set changes the
        ``scenario-stale`` flag says the priors no longer come from that data
        alone).
        """
        nm = check_name("scenario", name)
        if nm == BASE_SCENARIO:
            raise CaseError(f"'{BASE_SCENARIO}' is the hypothesis table's own priors; "
                            "edit those with set_priors, or choose another scenario name")
        if nm in self._scenarios and not replace_existing:
            raise CaseError(f"scenario '{nm}' already exists; pass replace_existing=True to "
                            "overwrite it")
        mean = "" if meaning is None else meaning
        if mean not in SCENARIO_MEANINGS:
            raise CaseError(f"meaning {meaning!r:.40} of scenario '{nm}' is not one of "
                            f"{[m for m in SCENARIO_MEANINGS if m]} (or None: the numbers as "
                            "stated)")
        sc_src = Source.coerce(source, what=f"source of scenario '{nm}'")
        if priors is None:
            if mean != "equal":
                raise CaseError(f"scenario '{nm}' needs its priors (one per hypothesis), or "
                                "meaning='equal' for equal priors")
            priors = rv.equal_priors(list(self._hyps))
        values = self._complete_priors(priors, f"scenario '{nm}'")
        total = sum(values.values())
        if mean == "equal" and max(values.values()) - min(values.values()) > SUM_TOL:
            raise CaseError(f"scenario '{nm}' is declared equal priors but its priors differ "
                            f"({fmt_g(min(values.values()))} to {fmt_g(max(values.values()))}); "
                            "leave priors out, or declare another meaning")
        if mean == "data" and not sc_src.is_sourced:
            raise CaseError(f"scenario '{nm}' is declared taken from data, so name the data set: "
                            "source='...' (where), with who, when and why")
        with self._edit("scenarios"):
            if abs(total - 1) > SUM_TOL:
                if not normalize:
                    raise CaseError(f"priors of scenario '{nm}' sum to {fmt_g(total)}, not 1; "
                                    "fix them or pass normalize=True")
                values = {k: v / total for k, v in values.items()}
                self._record("normalize-priors", nm,
                             f"scenario priors summed to {fmt_g(total)}; rescaled to 1")
            self._scenarios[nm] = Scenario(nm, values, sc_src, check_text("note", note), mean,
                                           tuple(self._hyps) if mean == "data" else ())

    def remove_scenario(self, name: str) -> None:
        sc = self.prior_scenario(name)
        with self._edit("scenarios"):
            del self._scenarios[sc.name]
            if self._active == sc.name:
                self._active = BASE_SCENARIO

    def use_scenario(self, name: str | None) -> None:
        """Make ``name`` the active scenario (``None`` or 'base': the table's own priors)."""
        nm = BASE_SCENARIO if name is None else name
        if nm != BASE_SCENARIO:
            self.prior_scenario(nm)
        with self._edit("scenario"):
            self._active = nm

    @contextlib.contextmanager
    def scenario(self, name: str):
        """Temporarily use scenario ``name`` (restored afterwards, no listeners fired)."""
        if name != BASE_SCENARIO:
            self.prior_scenario(name)
        old = self._active
        self._active = name
        try:
            yield self
        finally:
            self._active = old

    def _complete_priors(self, priors: Any, what: str) -> dict[str, float]:
        if isinstance(priors, pd.Series):
            priors = priors.to_dict()
        if not isinstance(priors, Mapping):
            raise CaseTypeError(f"{what} must map each hypothesis name to its prior, got "
                                f"{type(priors).__name__}")
        check_keys(what, priors, tuple(self._hyps), kind="priors")
        return {h: check_probability(f"prior of '{h}' in {what}", priors[h]) for h in self._hyps}

    # ------------------------------------------------------------------ persistence
    def to_dict(self) -> dict[str, Any]:
        """A JSON-ready, lossless description of the case (see casefile for the envelope)."""
        return serial.case_to_dict(self)

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> Case:
        """Rebuild a case from :meth:`to_dict` output (every field validated)."""
        return cls.from_members(**serial.parts_from_dict(data))

    @classmethod
    def from_members(cls, title: str, hypotheses: Iterable[Hypothesis], *,
                     evidence: Iterable[Evidence] = (), scenarios: Iterable[Scenario] = (),
                     joint_groups: Iterable[JointGroup] = (),
                     active_scenario: str = BASE_SCENARIO,
                     assumptions: Iterable[Mapping[str, str]] = (),
                     extras: Mapping[str, Any] | None = None, question: str = "",
                     analyst: str = "", notes: str = "", exhaustive: bool = False,
                     safety_related: bool = False) -> Case:
        """A case assembled from members already built (what loading a file does).

        Unlike the constructor, priors that do not sum to 1 are kept as they are
        (a part-way edit that was saved; the ledger flags it). The whole is
        validated as every edit is, and the extras sections by their
        validators; a member that does not fit is an error naming it.
        """
        case = cls.__new__(cls)
        case._init_fields(title=title, question=question, analyst=analyst, notes=notes,
                          exhaustive=exhaustive, safety_related=safety_related)
        hyps = list(hypotheses)
        for h in hyps:
            if not isinstance(h, Hypothesis):
                raise CaseTypeError(f"from_members takes Hypothesis members, got "
                                    f"{type(h).__name__}")
        case._hyps = {h.name: h for h in hyps}
        if len(case._hyps) != len(hyps):
            raise CaseError("from_members: two hypotheses share a name; names must be unique")
        names = tuple(case._hyps)
        for ev in evidence:
            if ev.hypotheses != names:
                raise CaseError(f"evidence '{ev.name}' has columns {list(ev.hypotheses)[:6]}, "
                                f"not the case's hypotheses {list(names)[:6]}")
            case._evidence[ev.name] = ev
        for sc in scenarios:
            if set(sc.priors) != set(names):
                raise CaseError(f"scenario '{sc.name}' does not give a prior for exactly the "
                                "case's hypotheses")
            case._scenarios[sc.name] = sc
        for g in joint_groups:
            case._groups[g.name] = g
        if active_scenario != BASE_SCENARIO and active_scenario not in case._scenarios:
            raise CaseError(f"active scenario {active_scenario!r} is not one of the case's "
                            f"scenarios {case.scenario_names}")
        case._active = active_scenario
        case.assumptions = [dict(a) for a in assumptions]
        dep.refreshed_conditionals(case._evidence)
        case._validate()  # evidence structure first: extras validators rely on it
        for key, value in (extras or {}).items():
            case.extras[check_name("extras key", key)] = validate_extra(key, value, case)
        return case

    @classmethod
    def from_tables(cls, title: str, priors: Any, likelihoods: Mapping[str, Any], *,
                    observed: Mapping[str, str | None] | None = None,
                    sources: Mapping[str, Any] | Any = None,
                    descriptions: Mapping[str, str] | None = None,
                    normalize_likelihoods: bool = False, **kwargs: Any) -> Case:
        """A case with many evidence items built in one step (a model for batch scoring).

        Parameters
        ----------
        title : str
        priors : mapping, Series or DataFrame
            The hypotheses and their priors, in any form the constructor takes.
        likelihoods : mapping
            Evidence name -> its table P(state | hypothesis): a DataFrame with the
            states as rows and the hypotheses as columns, or any form
            :meth:`add_evidence` takes.
        observed : mapping, optional
            Evidence name -> observed state (items left out are pending).
        sources : mapping or Source, optional
            Evidence name -> its Source (or one Source for every item).
        descriptions : mapping, optional
            Evidence name -> description.
        normalize_likelihoods : bool
            Rescale columns that do not sum to 1 (recorded as an assumption).
        **kwargs
            Passed to the constructor (``question``, ``analyst``, ``source`` of the
            priors, ``normalize``, ``exhaustive`` ...).

        Every table is checked as :meth:`add_evidence` checks it, and the whole
        case is validated once, so ten thousand items take one pass instead of
        ten thousand edits. An error names the item.
        """
        case = cls(title, priors, **kwargs)
        if not isinstance(likelihoods, Mapping):
            raise CaseTypeError(f"likelihoods must map each evidence name to its table, got "
                                f"{type(likelihoods).__name__}")
        observed = dict(observed or {})
        descriptions = dict(descriptions or {})
        per_item = isinstance(sources, Mapping) and not set(sources) <= set(Source._FIELDS)
        for label, given in (("observed", observed), ("descriptions", descriptions),
                             ("sources", sources if per_item else {})):
            unknown = [k for k in given if k not in likelihoods]
            if unknown:
                raise CaseError(f"{label} names evidence {short_list(unknown)} that has no "
                                "table in likelihoods")
        items: dict[str, Evidence] = {}
        for name, table in likelihoods.items():
            ev = case._build_evidence(
                name, likelihoods=table, states=None, observed=observed.get(name),
                source=sources.get(name) if per_item else sources,
                description=descriptions.get(name, ""), shared_source=None,
                likelihood_evidence=False, normalize=normalize_likelihoods)
            if ev.name in items:
                raise CaseError(f"evidence '{ev.name}' is given twice; names must be unique")
            items[ev.name] = ev
        with case._edit("evidence"):
            case._evidence.update(items)
            if normalize_likelihoods:
                case._record("normalize-likelihoods", "all items",
                             "likelihood columns rescaled to sum to 1 over the states")
        return case

    @classmethod
    def from_csv(cls, title: str, path: str | Path, **kwargs: Any) -> Case:
        """Build a case from a CSV of hypotheses (columns name, prior, and optional
        description, catch_all, where, who, when, why)."""
        try:
            frame = pd.read_csv(path, dtype={"name": str})
        except (OSError, UnicodeDecodeError, pd.errors.ParserError) as exc:
            raise CaseError(f"cannot read hypotheses CSV {str(path)!r}: {exc}") from exc
        return cls(title, frame, **kwargs)

    @classmethod
    def from_excel(cls, path: str | Path, *, strict: bool = True) -> Case:
        """Read a case from an Excel workbook in the layout the README documents (a sheet
        of hypotheses with priors and sources, one sheet per evidence item or one long
        sheet of likelihoods; see :mod:`beliefledger.workbook`).

        ``strict=True`` refuses priors or likelihood columns that do not sum to 1;
        ``strict=False`` keeps them as typed (the ledger flags them). A bad cell raises
        :class:`~beliefledger.errors.WorkbookError` naming the sheet, the cell (A1
        notation) and the fix; nothing is made then.
        """
        from ..workbook import read_workbook

        return read_workbook(path, strict=strict)

    def to_excel(self, path: str | Path, *, layout: str = "sheets") -> Path:
        """Write the case as an Excel workbook :meth:`from_excel` reads back unchanged,
        atomically, with the assumption register as an extra sheet for a reviewer to
        annotate (not read back). ``layout="long"``: one long sheet of likelihoods
        instead of one sheet per item. Returns the path."""
        from ..workbook import write_workbook

        return write_workbook(self, path, layout=layout)

    def save(self, path: str | Path) -> Path:
        """Write the case to a JSON case file atomically; returns the path."""
        from ..casefile import save_case

        return save_case(self, path)

    def copy(self) -> Case:
        """An independent copy (listeners are not copied)."""
        return type(self).from_dict(self.to_dict())

    # ------------------------------------------------------------------ display
    def __repr__(self) -> str:
        total = sum(h.prior for h in self._hyps.values())
        sums = "priors sum to 1" if abs(total - 1) <= SUM_TOL else f"priors sum to {fmt_g(total)}"
        n_obs = sum(1 for e in self._evidence.values() if e.is_observed)
        return (f"Case({self.title!r}: {len(self._hyps)} hypotheses, {sums}; "
                f"{len(self._evidence)} evidence items, {n_obs} observed; "
                f"scenario {self._active!r})")

    def _repr_html_(self) -> str:
        from ..display import case_html

        return case_html(self)

    def _repr_mimebundle_(self, include=None, exclude=None) -> dict[str, Any]:
        from ..casefile import envelope

        return {
            "text/plain": repr(self),
            "text/html": self._repr_html_(),
            CASE_MIMETYPE: envelope(self),
        }


def _refuse_conditional_edit(ev: Evidence) -> None:
    if ev.given is not None:
        raise CaseError(f"evidence '{ev.name}' is stated given '{ev.given}': its table is the "
                        "margin of its conditional tables; edit those with "
                        "set_conditional_likelihoods")



def _rescaled(hyps: dict[str, Hypothesis], total: float) -> dict[str, Hypothesis]:
    return {n: replace(h, prior=h.prior / total) for n, h in hyps.items()}



__all__ = ["Case"]
