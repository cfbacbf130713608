"""Central composite and Box–Behnken designs."""

import itertools
import json
import re
from pathlib import Path

import numpy as np
import pytest
from pyDOE3 import bbdesign, ccdesign
from pyDOE3.utils import scale_samples

from trialkit.planning.designs import build_design, center_points
from trialkit.planning.designs.surface import BBD_BLOCKS, box_behnken_core, rotatable_alpha
from trialkit.trial.factors import Factor

REF = json.loads((Path(__file__).parent / "reference" / "designs" /
                  "design_properties.json").read_text())


def cont(k):
    return [Factor.continuous(f"x{i}", 10.0, 30.0) for i in range(k)]


@pytest.mark.parametrize("row", REF["ccd_rotatable_alpha"]["table"],
                         ids=lambda r: f"k{r['k']}_F{r['F']}")
def test_rotatable_alpha_box_hunter_1957(row):
    # source: Box & Hunter (1957) alpha = F^(1/4); e-Handbook Table 3.23 (3 decimals)
    assert rotatable_alpha(row["F"]) == pytest.approx(row["alpha"], abs=5e-4)


@pytest.mark.parametrize("k,alpha", [(2, 1.414), (3, 1.682), (4, 2.000)])
def test_ccd_rotatable_axial_distance_and_run_count(k, alpha):
    # source: Box & Hunter (1957); e-Handbook Table 3.23; runs 2^k + 2k + center points
    d = build_design(cont(k), "central-composite", {}, seed=0)
    assert d.alpha == pytest.approx(alpha, abs=5e-4)
    assert d.n_points == 2 ** k + 2 * k
    axial = d.coded[[p == "axial" for p in d.point]].to_numpy()
    assert np.allclose(np.abs(axial).max(axis=1), d.alpha)
    assert d.point.count("factorial") == 2 ** k


@pytest.mark.parametrize("row", [r for r in REF["run_counts_ccd_vs_box_behnken"]["table"]
                                 if 2 <= r["k"] <= 4])
def test_ccd_run_counts_with_centers_ehandbook_table_3_28(row):
    # source: e-Handbook Table 3.28, e.g. "20 (6 centre)" for k = 3
    total, centers = map(int, re.match(r"(\d+) \((\d+) cent", row["ccd"]).groups())
    d = build_design(cont(row["k"]), "central-composite", {}, seed=0)
    assert d.n_points + len(center_points(d, centers)) == total


def test_ccd_face_and_inscribed_and_numeric_alpha():
    # e-Handbook 5.3.3.6.1: CCF alpha = 1; CCI = CCC divided by alpha
    face = build_design(cont(3), "central-composite", {"alpha": "face"}, seed=0)
    assert face.alpha == 1.0 and set(np.unique(face.coded.to_numpy())) == {-1.0, 0.0, 1.0}
    cci = build_design(cont(3), "central-composite", {"alpha": "inscribed"}, seed=0)
    ccc = build_design(cont(3), "central-composite", {"alpha": "rotatable"}, seed=0)
    assert np.allclose(cci.coded.to_numpy(), ccc.coded.to_numpy() / ccc.alpha)
    nat = cci.natural()
    assert nat.to_numpy().min() == pytest.approx(10.0) and nat.to_numpy().max() == 30.0
    given = build_design(cont(2), "central-composite", {"alpha": 1.25}, seed=0)
    assert given.alpha == 1.25


def test_pydoe3_fault_ccdesign_adds_centers_and_takes_no_numeric_alpha():
    # pyDOE3 1.6.2: ccdesign(3) carries 4 + 4 center runs; alpha is only a name
    theirs = ccdesign(3)
    assert (np.abs(theirs).sum(axis=1) == 0).sum() == 8
    with pytest.raises((AssertionError, AttributeError)):
        ccdesign(3, alpha=1.5)
    ours = build_design(cont(3), "central-composite", {"alpha": 1.5}, seed=0)
    assert not (np.abs(ours.coded.to_numpy()).sum(axis=1) == 0).any()
    assert ours.alpha == 1.5


def test_pydoe3_fault_face_alpha_ignored_ours_reports_it():
    # pyDOE3 1.6.2: face='ccf' puts axial at 1 whatever alpha says; ours has alpha="face"
    theirs = ccdesign(2, center=(0, 0), alpha="rotatable", face="ccf")
    assert np.abs(theirs).max() == 1.0
    ours = build_design(cont(2), "central-composite", {"alpha": "face"}, seed=0)
    assert ours.alpha == 1.0 and "face" in ours.notes[0]


def test_pydoe3_fault_scaling_expects_unit_interval():
    # pyDOE3 scale_samples maps [0, 1]; coded -1 would land below low. Ours decodes.
    assert scale_samples(np.array([[-1.0], [1.0]]), [(10.0, 30.0)]).ravel().tolist() == \
        [-10.0, 30.0]
    d = build_design(cont(2), "central-composite", {"alpha": "face"}, seed=0)
    nat = d.natural().to_numpy()
    assert nat.min() == 10.0 and nat.max() == 30.0


def test_ccd_crossed_with_categorical():
    fs = cont(2) + [Factor.categorical("metal", ["mild", "cast", "wrought"])]
    d = build_design(fs, "central-composite", {}, seed=0)
    assert d.n_points == 3 * 8
    assert d.coded.groupby("metal").size().tolist() == [8, 8, 8]


@pytest.mark.parametrize("k,edge", [(3, 12), (4, 24), (5, 40), (6, 48), (7, 56)])
def test_box_behnken_edge_runs_box_behnken_1960(k, edge):
    # source: Box & Behnken (1960); e-Handbook Table 3.28 (15/27/46/54 with centers;
    # k = 7: 62 from memory)
    d = build_design(cont(k), "box-behnken", {}, seed=0)
    assert d.n_points == edge and set(d.point) == {"edge"} and d.has_center
    x = d.coded.to_numpy()
    assert np.all(x.sum(axis=0) == 0)
    xtx = x.T @ x
    assert np.allclose(xtx, np.diag(np.diag(xtx)))  # linear terms orthogonal
    decomp = REF["run_counts_ccd_vs_box_behnken"]["box_behnken_decomposition_inferred"]
    n_edge, n_center = map(int, re.findall(r"\d+", decomp[str(k)])[:2])
    assert d.n_points == n_edge
    total = {r["k"]: r["box_behnken"] for r in REF["run_counts_ccd_vs_box_behnken"]["table"]}
    assert d.n_points + len(center_points(d, n_center)) == total[k]


@pytest.mark.parametrize("k", [3, 4, 5, 6, 7])
def test_box_behnken_every_pair_of_factors_together(k):
    # Box & Behnken (1960): every pair of factors varies together in some block
    x = box_behnken_core(k)
    for i, j in itertools.combinations(range(k), 2):
        assert np.any((x[:, i] != 0) & (x[:, j] != 0))


def test_seven_factor_blocks_are_a_balanced_incomplete_block_design():
    # BIBD (7, 3, 1): each pair of factors in exactly one block (Box & Behnken 1960)
    counts = {p: 0 for p in itertools.combinations(range(7), 2)}
    for block in BBD_BLOCKS[7]:
        for p in itertools.combinations(sorted(block), 2):
            counts[p] += 1
    assert set(counts.values()) == {1}


def test_pydoe3_fault_bbdesign_six_and_seven_factors():
    # pyDOE3 1.6.2 bbdesign uses all factor pairs: 60 and 84 edge runs for 6 and 7
    assert len(bbdesign(6, center=0)) == 60 and len(bbdesign(7, center=0)) == 84
    assert len(box_behnken_core(6)) == 48 and len(box_behnken_core(7)) == 56
