"""Personal feedback: keyed-hash pseudonyms, the key required, the minimum of cases, no name in clear."""

import json

import numpy as np
import pandas as pd
import pytest

from model.audit import audit_records
from model.base.errors import InputError
from model.trends.feedback import keyed_hash, people_list, personal_feedback, pseudonymise

KEY = "fernhollow-demo-key-not-for-use"
NAMES = ["Dr Ash", "Dr Beech", "Dr Elm", "Dr Oak", "Dr Yew"]


@pytest.fixture(scope="module")
def cases():
    c = audit_records(["demo_data/records/fernhollow_2026.parquet"]).cases.copy()
    # Invented anaesthetists: four share the cases; Dr Yew has 5 cases only.
    names = np.array(NAMES[:4], dtype=object)[np.arange(len(c)) % 4]
    names[:5] = "Dr Yew"
    c["anaesthetist"] = names
    return c


def test_hmac_sha256_matches_rfc_4231():
    # RFC 4231, test case 2 (key "Jefe"): HMAC-SHA-256 of "what do ya want for nothing?".
    assert keyed_hash("what do ya want for nothing?", "Jefe") == (
        "5bdcc146bf60754e6a042426089575c75a003f089d2739839dec58b964ec3843"
    )


def test_pseudonyms_are_stable_keyed_and_ignore_case():
    a = pseudonymise(["Dr Ash", " dr ash "], KEY)
    assert a[0] == a[1] and a[0].startswith("P-") and len(a[0]) == 14
    assert pseudonymise(["Dr Ash"], KEY + "x")[0] != a[0]


@pytest.mark.parametrize("key", [None, "", "short"])
def test_the_key_is_required(cases, key):
    with pytest.raises(InputError, match="pseudonym key"):
        personal_feedback(cases, "Dr Ash", key)


def test_feedback_shows_no_identifier_in_clear(cases):
    f = personal_feedback(cases, "Dr Ash", KEY)
    assert f.shown and len(f.table) == 12
    text = json.dumps(f.to_dict()) + f.table.to_csv() + repr(f)
    for name in NAMES:
        assert name not in text and name.casefold() not in text.casefold()
    assert KEY not in text
    # their own value beside the spread of the people who reached the minimum
    row = f.table.iloc[0]
    assert row["department_q1"] <= row["department_median"] <= row["department_q3"]
    assert row["people"] == 4  # Dr Yew (5 cases) is left out of the spread


def test_a_person_under_the_minimum_is_not_shown(cases):
    f = personal_feedback(cases, "Dr Yew", KEY)
    assert not f.shown and f.table.empty and "fewer than 20" in f.note
    listed = people_list(cases, KEY)
    assert len(listed) == 4 and pseudonymise(["Dr Yew"], KEY)[0] not in set(listed["person"])
    assert not any(n in listed.to_csv() for n in NAMES)


def test_no_anaesthetist_column_is_a_message():
    with pytest.raises(InputError, match="anaesthetist"):
        personal_feedback(pd.DataFrame({"theatre": []}), "Dr Ash", KEY)
