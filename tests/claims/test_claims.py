"""Every claim of every audience, in English and Spanish, holds for its data: a generated corpus, checked.

French (fr_FR) goes through the same checker on a subset of the corpus.

The corpus (tests/claims/corpus.py, generated with fixed seeds) covers 14 families of data; each
case is described, narrated for the memo, methods and full audiences in en_US and es_ES, and
every claim every sentence records is re-derived from the raw values by tests/claims/checker.py,
which imports none of narrator's decisions. The first counter-example is reported with its seed.
"""

from __future__ import annotations

import os

import pytest

from claims.checker import CHANGE_CHECKS, CHECKS, GROUP_CHECKS
from claims.corpus import FAMILIES, corpus
from claims.harness import check_case, check_corpus

PER_FAMILY = 150  # 14 families: 2,100 data sets
WORKERS = min(2, os.cpu_count() or 1)  # the cases are independent; this machine has 2 cores


def test_the_checker_knows_every_claim_kind_the_banks_can_make():
    from narrator.phrasing.bank import load_bank
    from narrator.phrasing.licences import CLAIM_KINDS

    known = set(CHECKS) | set(GROUP_CHECKS) | set(CHANGE_CHECKS)
    assert set(CLAIM_KINDS) <= known, sorted(set(CLAIM_KINDS) - known)
    used = {variant.claim for message in load_bank("en").messages.values() if isinstance(message, tuple)
            for variant in message}
    assert used <= known


def test_the_corpus_covers_every_family_with_2000_cases():
    cases = corpus(PER_FAMILY)
    assert len(cases) >= 2000 and {case.family for case in cases} == set(FAMILIES) and len(FAMILIES) >= 12
    assert len({case.seed for case in cases}) == len(cases)


def test_every_claim_holds_on_the_corpus():
    results = check_corpus(PER_FAMILY, WORKERS)
    assert len(results) == PER_FAMILY * len(FAMILIES)
    failing = [(name, problems) for name, problems in results if problems]
    first = failing[0] if failing else None
    assert first is None, (f"{len(failing)} of {len(results)} cases fail; the first counter-example is case "
                           f"{first[0]} (family#seed):\n" + "\n".join(first[1][:8]))


@pytest.mark.parametrize("family", FAMILIES)
def test_one_case_of_each_family_goes_through_the_claims(family):
    # Quick, per family, so a broken family is named on its own.
    case = corpus(1)[FAMILIES.index(family)]
    assert not check_case(case)


FRENCH_PER_FAMILY = 12  # a subset in French: 14 families x 12 cases, each worded for three audiences


def test_every_claim_holds_in_french_on_a_subset_of_the_corpus():
    # The same checker on French words (fr_FR): the claims a sentence records are the bank's, whatever the
    # language, and a population's report must not hedge in French either.
    cases = corpus(FRENCH_PER_FAMILY)
    assert len(cases) == FRENCH_PER_FAMILY * len(FAMILIES)
    checked = 0
    for case in cases:
        problems = check_case(case, locales=("fr_FR",))
        assert not problems, f"case {case.name} in fr_FR:\n" + "\n".join(problems[:8])
        checked += 1
    assert checked == len(cases)


WRITTEN_FAMILIES = ("zero_inflated", "heavy_ties", "money", "tiny", "constant", "population", "missing_codes",
                    "mixture2")


@pytest.mark.parametrize("family", WRITTEN_FAMILIES)
def test_a_sample_of_the_corpus_goes_through_the_writer_with_its_words_intact(family, tmp_path):
    # The corpus runs on narratives (no figures, no .docx) to stay fast; one case of these families is written
    # as a full report, read back with python-docx, and every checked sentence must be in it word for word.
    from docx import Document

    from claims.harness import _describe
    from narrator.phrasing import narrate
    from narrator.reading.sample import Sample
    from narrator.report import report_from_findings

    case = corpus(1)[FAMILIES.index(family)]
    sample = Sample.from_values(case.values, name="measure")
    findings = _describe(sample, case.options)
    for locale in ("en_US", "es_ES"):
        out = tmp_path / f"{family}-{locale}.docx"
        report_from_findings(sample, findings, out, audience="full", locale=locale, currency=case.currency)
        text = "\n".join(paragraph.text for paragraph in Document(out).paragraphs)
        narrative = narrate(findings, "full", locale, currency=case.currency)
        for sentence in narrative.sentences():
            assert sentence.text in text, (case.name, locale, sentence.text)
        assert not check_case(case)
