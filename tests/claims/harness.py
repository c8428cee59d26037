"""Word every case of the corpus for every audience and locale, and check every claim it records.

:func:`check_case` narrates one case (memo, methods and full; en_US and es_ES; the "what changed"
section for refreshes; the set narrative for groups) and returns every problem the checker finds;
:func:`check_corpus` runs the corpus over worker processes (the cases are independent) and returns
the problems in corpus order, so the first counter-example is the same however many workers ran.
"""

from __future__ import annotations

import multiprocessing
import pickle
from concurrent.futures import ProcessPoolExecutor

import numpy as np

from claims.checker import Raw, check_claim, estimating_words
from claims.corpus import corpus
from narrator.engine.describe import describe
from narrator.engine.group_difference import compare_groups
from narrator.history.changes import compare, compare_sets
from narrator.history.sidecar import FindingsSet, GroupFindings, VariableFindings
from narrator.phrasing import narrate
from narrator.phrasing.sets import SetOptions, narrate_set
from narrator.phrasing.what_changed import changes_section, set_changes_narrative

AUDIENCES = ("memo", "methods", "full")
LOCALES = ("en_US", "es_ES")
PRIVACY_THRESHOLD = 10


def _describe(values, options):
    return describe(values, name="measure", **options)


def _grouped_set(values, labels, options):
    """A findings set of one variable by group, with groups of fewer than 10 usable values suppressed."""
    raw = Raw.of(values, options)
    labels = np.asarray(labels, dtype=object)
    usable = {label: Raw.of(values[labels == label], options) for label in dict.fromkeys(labels)}
    shown = [label for label, part in usable.items() if part.n >= PRIVACY_THRESHOLD]
    keep = np.isin(labels, shown)
    overall = _describe(values[keep], options)
    groups = tuple(GroupFindings(str(label), _describe(values[labels == label], options)) for label in shown)
    comparison = None
    if overall.center is not None:  # the groups compared pair by pair, as narrator.groups.analysis does
        comparison = compare_groups([(group.label, usable[label].values, group.findings)
                                     for group, label in zip(groups, shown, strict=True)],
                                    lead=overall.center.lead, level=float(overall.options.get("level", 0.95)),
                                    population=overall.variable.population)
    item = VariableFindings(findings=overall, groups=groups, suppressed_groups=len(usable) - len(shown),
                            comparison=comparison)
    raws = {"": Raw.of(values[keep], options), **{str(label): usable[label] for label in shown}}
    del raw
    return FindingsSet(variables=(item,), group_by="site", privacy_threshold=PRIVACY_THRESHOLD), raws


def _narratives(case, locales=LOCALES):
    """(what, narrative, raw values by claim subject) for every text the case is worded into."""
    out = []
    if case.family == "grouped":
        findings_set, raws = _grouped_set(case.values, case.labels, case.options)
        for audience in AUDIENCES:
            for locale in locales:
                narrative = narrate_set(findings_set, SetOptions(audience=audience, locale=locale))
                out.append((f"{audience} {locale}", narrative, {"": raws[""], "groups": raws}))
        return out
    raw = Raw.of(case.values, case.options)
    findings = _describe(case.values, case.options)
    for audience in AUDIENCES:
        for locale in locales:
            narrative = narrate(findings, audience, locale, currency=case.currency)
            out.append((f"{audience} {locale}", narrative, {"": raw}))
    if case.previous is not None:
        old_raw = Raw.of(case.previous, case.options)
        old = _describe(case.previous, case.options)
        for locale in locales:
            section = changes_section(compare(old, findings), old, findings, locale=locale)
            out.append((f"changes {locale}", section, {"": raw, "change": (old_raw, raw)}))
        if case.labels is not None:
            old_set, old_raws = _grouped_set(case.previous, case.previous_labels, case.options)
            new_set, new_raws = _grouped_set(case.values, case.labels, case.options)
            pairs = {"": new_raws[""], "change": (old_raws[""], new_raws[""])}
            pairs.update({f"change:{label}": (old_raws[label], new_raws[label])
                          for label in new_raws if label and label in old_raws})
            for locale in locales:
                narrative = set_changes_narrative(compare_sets(old_set, new_set), locale=locale)
                out.append((f"set changes {locale}", narrative, pairs))
    return out


def _sentences(text):
    if hasattr(text, "sentences") and callable(text.sentences):
        return list(text.sentences())
    return [s for paragraph in text.paragraphs for s in paragraph.sentences]


def _claims(text):
    claims = [(sentence.text, claim) for sentence in _sentences(text) for claim in sentence.claims]
    for figure in getattr(text, "figures", ()):
        claims.extend((figure.alt_text, claim) for claim in figure.claims)
    return claims


def _frozen(numbers: dict) -> bytes:
    """A claim's numbers as bytes that tell apart every two values the checker could tell apart (pickle
    writes each float's exact bits and every array whole; the same numbers in another order only miss)."""
    return pickle.dumps(numbers, protocol=pickle.HIGHEST_PROTOCOL)


def check_case(case, locales=LOCALES) -> list[str]:
    """Every problem with every claim of every text the case is worded into.

    A claim that several texts make in the same form (the same kind, numbers, shown strings,
    licences and subject; three audiences often share one) is derived from the values once and
    its problems reported for each text that makes it."""
    problems = []
    derived: dict = {}
    for what, text, raws in _narratives(case, locales):
        language = what.split()[-1][:2]
        for sentence in _sentences(text):
            if not sentence.claims:
                problems.append(f"{case.name} {what}: a sentence records no claim: {sentence.text!r}")
        if case.options.get("population"):
            for sentence in _sentences(text):
                found = estimating_words(sentence.text, language)
                if found:
                    problems.append(f"{case.name} {what}: estimating words {found} for a population: {sentence.text!r}")
        for sentence_text, claim in _claims(text):
            about = claim.about
            if about.startswith("change"):
                pair = raws.get(about) or raws.get("change")
                key = (claim.kind, about, tuple(claim.when), _frozen(claim.numbers), "pair", id(pair))
                if key not in derived:
                    derived[key] = (check_claim(claim, None, pair=pair), pair)
            else:
                raw, groups = raws[""], raws.get("groups")
                key = (claim.kind, about, tuple(claim.when), _frozen(claim.numbers), "raw", id(raw), id(groups))
                if key not in derived:
                    derived[key] = (check_claim(claim, raw, groups=groups), raw, groups)
            found = derived[key][0]  # the values it was derived from stay referenced, so no id is reused
            problems.extend(f"{case.name} {what} [{claim.kind}]: {problem}\n    in: {sentence_text}"
                            for problem in found)
    return problems




def _check_slice(arguments) -> list[tuple[str, list[str]]]:
    per_family, start, step = arguments
    cases = corpus(per_family)
    return [(cases[k].name, check_case(cases[k])) for k in range(start, len(cases), step)]


def check_corpus(per_family: int, workers: int = 2) -> list[tuple[str, list[str]]]:
    """(case name, problems) for every case of ``corpus(per_family)``, in corpus order."""
    if workers <= 1:
        return _check_slice((per_family, 0, 1))
    with ProcessPoolExecutor(max_workers=workers, mp_context=multiprocessing.get_context("fork")) as pool:
        parts = list(pool.map(_check_slice, [(per_family, k, workers) for k in range(workers)]))
    merged = []
    for index in range(max(len(part) for part in parts)):
        for part in parts:
            if index < len(part):
                merged.append(part[index])
    return merged
