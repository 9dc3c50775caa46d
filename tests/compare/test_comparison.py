import json
import re

import numpy as np
import pytest

from tests.compare.helpers import glass_replicate
from workbench.compare import (
    CAUTION,
    Tolerance,
    add_exemplar,
    compare_to_collection,
    compare_to_exemplar,
    create_collection,
    load_collection,
    parse_ratio,
)
from workbench.compare._common import read_peaks
from workbench.errors import ComparisonError

FORBIDDEN = re.compile(r"match|same source", re.IGNORECASE)  # brief: never an identity claim
SR = parse_ratio("Sr:407.771/Ca:393.366")
FE = parse_ratio("Fe:259.940/Ca:393.366")
TOL = Tolerance(fixed=0.05)
GLASS = {"Fe", "Mg", "Si", "Ca", "Al", "Sr", "Na", "K"}


def _q(data: bytes, i: int = 0):
    return read_peaks(data, name=f"Q-r{i + 1}.csv", medium="air")


@pytest.fixture
def coll(tmp_path):
    # Known ratios drawn from N(mu, sigma): Sr/Ca ~ N(0.060, 0.002), Fe/Ca ~ N(0.050, 0.002).
    rng = np.random.default_rng(20261202)
    create_collection(tmp_path, "c", "synthetic")
    for ex_id, mu_sr in (("K-A", 0.060), ("K-B", 0.090)):
        reps = [
            glass_replicate(rng, rng.normal(mu_sr, 0.002), rng.normal(0.050, 0.002))
            for _ in range(5)
        ]
        add_exemplar(tmp_path, "c", ex_id, reps, medium="air", elements=GLASS)
    add_exemplar(tmp_path, "c", "K-two", [glass_replicate(rng, 0.06)] * 2, medium="air")
    return load_collection(tmp_path, "c")


def test_same_distribution_cannot_be_distinguished(coll):
    rng = np.random.default_rng(7)
    q = [
        _q(glass_replicate(rng, rng.normal(0.060, 0.002), rng.normal(0.05, 0.002)), i)
        for i in range(3)
    ]
    rep = compare_to_exemplar(
        q, coll, "K-A", tolerance=TOL, ratios=[SR, FE], questioned_elements=GLASS
    )
    assert rep.outcome == "cannot be distinguished"
    assert [r["outcome"] for r in rep.data["ratios"]] == ["cannot be distinguished"] * 2
    assert rep.data["elements"]["outcome"] == "cannot be distinguished"
    assert rep.data["known"]["n_replicates"] == 5


def test_ten_sigma_shift_on_one_ratio_is_distinguishable_on_that_ratio(coll):
    rng = np.random.default_rng(8)
    q = [_q(glass_replicate(rng, 0.060 + 10 * 0.002, rng.normal(0.05, 0.002)), i) for i in range(3)]
    rep = compare_to_exemplar(q, coll, "K-A", tolerance=TOL, ratios=[SR, FE])
    outcomes = {r["label"].split()[0]: r["outcome"] for r in rep.data["ratios"]}
    assert outcomes == {"Sr": "distinguishable", "Fe": "cannot be distinguished"}
    assert rep.outcome == "distinguishable"
    assert any("Sr 407.771" in d for d in rep.data["overall"]["distinguishing"])


def test_element_presence_absence(coll):
    rng = np.random.default_rng(9)
    q = [_q(glass_replicate(rng, 0.06))]
    engine = {"elements": [{"element": e, "ion": 1, "verdict_level": 3} for e in GLASS]}
    engine["elements"].append({"element": "Ba", "ion": 2, "verdict_level": 2})
    engine["elements"].append({"element": "Ti", "ion": 2, "verdict_level": 1})  # below 2: absent
    rep = compare_to_exemplar(q, coll, "K-A", tolerance=TOL, questioned_elements=engine)
    el = rep.data["elements"]
    assert el["differing_elements"] == ["Ba"]
    assert rep.outcome == "distinguishable"


def test_no_criterion_means_not_evaluated(coll):
    q = [_q(glass_replicate(np.random.default_rng(1), 0.06))]
    rep = compare_to_exemplar(q, coll, "K-A", tolerance=TOL)
    assert rep.outcome == "not evaluated"
    assert 0.0 < rep.data["line_similarity"]["mean_line_overlap"] <= 1.0


def test_too_few_known_replicates(coll):
    q = [_q(glass_replicate(np.random.default_rng(2), 0.06))]
    with pytest.raises(ComparisonError, match="at least 3"):
        compare_to_exemplar(q, coll, "K-two", tolerance=TOL, ratios=[SR])


def test_missing_line_names_file(coll):
    q = [_q(glass_replicate(np.random.default_rng(3), 0.06))]
    with pytest.raises(ComparisonError, match="known replicate 'K-A-replicate-1'"):
        compare_to_exemplar(
            q, coll, "K-A", tolerance=TOL, ratios=[parse_ratio("Pb:405.781/Ca:393.366")]
        )


def test_collection_ranking(coll):
    rng = np.random.default_rng(10)
    q = [_q(glass_replicate(rng, rng.normal(0.090, 0.002)), i) for i in range(3)]
    rank = compare_to_collection(q, coll, tolerance=TOL, ratios=[SR])
    entries = {e["exemplar"]: e for e in rank.data["entries"]}
    assert entries["K-B"]["outcome"] == "cannot be distinguished"
    assert entries["K-A"]["outcome"] == "distinguishable"
    assert entries["K-two"]["compared"] is False  # two replicates: listed with the reason
    assert "at least 3" in entries["K-two"]["reason"]


def test_json_deterministic_and_wording(coll):
    rng = np.random.default_rng(11)
    q = [_q(glass_replicate(rng, 0.061), i) for i in range(2)]
    kw = {"tolerance": TOL, "ratios": [SR, FE], "questioned_elements": GLASS}
    a = compare_to_exemplar(q, coll, "K-A", **kw)
    b = compare_to_exemplar(q, coll, "K-A", **kw)
    assert a.to_json() == b.to_json()
    assert json.loads(a.to_json())["caution"] == CAUTION
    rank = compare_to_collection(q, coll, **kw)
    assert rank.to_json() == compare_to_collection(q, coll, **kw).to_json()
    for text in (a.to_json(), a.to_text(), rank.to_json(), rank.to_text()):
        assert not FORBIDDEN.search(text), FORBIDDEN.search(text)
        assert "common origin" in text and "qualified examiner" in text
