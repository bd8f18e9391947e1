"""The estimators through Python: published worked examples, manufactured data, and the same
figures as the Rust library gives through the command line, bit for bit."""

import math

import numpy as np
import pytest

import meshbound as mb
from conftest import REPO, bits, run_cli_json

# Celik, Ghia, Roache, Freitas, Coleman & Raad (2008), J. Fluids Eng. 130(7) 078001, Table 1,
# first column: a 2-D case, N = 18000, 8000, 4500 cells (h = (1/N)^(1/2), only the ratios
# matter), phi = 6.063, 5.972, 5.863. The printed results (read from the table as recorded in
# the project's method notes, "from memory" of the publication; they agree with the
# equations to every printed digit): p = 1.53, phi_ext21 = 6.1685, e_a21 = 1.5 %,
# e_ext21 = 1.7 %, GCI_fine21 = 2.2 %.
CELIK_N = (18000.0, 8000.0, 4500.0)
CELIK_PHI = (6.063, 5.972, 5.863)


def celik_h():
    return [(1.0 / n) ** 0.5 for n in CELIK_N]


def test_celik_2008_table1_first_column():
    e = mb.three_mesh(celik_h(), CELIK_PHI, rule="celik_gci")
    # Tolerances: half a unit of the last printed digit (Celik et al. 2008, Table 1).
    assert abs(e.observed_order - 1.53) <= 0.005
    assert abs(e.extrapolated - 6.1685) <= 0.00005
    assert abs(e.approx_rel_error - 0.015) <= 0.0005
    assert abs(e.extrap_rel_error - 0.017) <= 0.0005
    assert abs(e.gci_fine - 0.022) <= 0.0005
    assert e.convergence == "monotonic"
    assert e.ratios[0] == pytest.approx(1.5, rel=1e-15)
    # With rule celik_gci the stated U is the GCI's: U = GCI_fine * |phi1| (Celik et al. 2008).
    assert e.uncertainty == pytest.approx(e.gci_fine * 6.063, rel=1e-14)
    assert e.uncertainty == e.gci_uncertainty
    # Every published rule is listed, in the library's order.
    assert [r.rule for r in e.rules] == list(mb.RULES)
    assert "Celik" in e.rules[0].title
    assert e.to_dict()["rules"][0]["rule"] == "celik_gci"


def test_celik_case_through_python_equals_the_command_line_bit_for_bit():
    # Source of the check: the Rust library through the command line on the same data
    # (studies/celik-2008-table1.yaml holds the Celik et al. 2008 case above).
    study = REPO / "studies" / "celik-2008-table1.yaml"
    cli = run_cli_json(study)
    py = mb.assess(study)
    assert py.to_dict() == cli
    q = cli["quantities"][0]
    h = [m["size"] for m in cli["meshes"]]
    e = mb.three_mesh(h, q["values"], rule="celik_gci", formal_order=2.0)
    tg = q["three_grid"]
    for key in (
        "convergence_ratio",
        "observed_order",
        "extrapolated",
        "approx_rel_error",
        "extrap_rel_error",
        "gci_fine",
        "gci_coarse",
        "oscillation_half_range",
    ):
        assert bits(getattr(e, key)) == bits(tg[key]), key
    assert bits(e.gci_uncertainty) == bits(tg["uncertainty"])
    by_rule = {r["rule"]: r for r in q["rules"]}
    for r in e.rules:
        assert bits(r.uncertainty) == bits(by_rule[r.rule]["uncertainty"]), r.rule
        assert r.branch == by_rule[r.rule]["branch"]
    # The governing statement of the study (rule celik_gci) is the rule's U.
    assert bits(e.uncertainty) == bits(q["uncertainty"]["absolute"])
    # Tables: one row per quantity and per (quantity, rule).
    assert py.quantities.loc["phi", "rule"] == "celik_gci"
    assert len(py.rules) == len(mb.RULES)
    assert py.meshes.index.tolist() == ["N1", "N2", "N3"]


def test_five_meshes_least_squares_equal_the_command_line_bit_for_bit():
    # Source of the check: the Rust library through the command line (Eca & Hoekstra 2014
    # least squares on the demo study's five meshes).
    study = REPO / "studies" / "axial-pump-five-meshes.yaml"
    cli = run_cli_json(study)
    h = [m["size"] for m in cli["meshes"]]
    names = [m["name"] for m in cli["meshes"]]
    checked = 0
    for q in cli["quantities"]:
        ls = q.get("least_squares")
        if not ls:
            continue
        e = mb.least_squares(h, q["values"], names=names)
        assert bits(e.order) == bits(ls["order"]), q["name"]
        assert e.per_mesh == tuple(ls["per_mesh"]), q["name"]
        assert e.fits == tuple(ls["fits"]), q["name"]
        assert e.convergence == ls["convergence"]
        checked += 1
    assert checked > 0


@pytest.mark.parametrize("p,r", [(2.0, 2.0), (1.0, 1.5), (1.7, 1.3)])
def test_manufactured_power_law_is_recovered(p, r):
    # Analytic: phi = phi0 + a h^p on h = 1, r, r^2 gives eps32/eps21 = r^p exactly, so the
    # observed order is p and Richardson extrapolation returns phi0 (Celik et al. 2008, eqs.).
    phi0, a = 3.25, 0.4
    h = [1.0, r, r * r]
    phi = [phi0 + a * x**p for x in h]
    e = mb.three_mesh(h, phi)
    assert e.observed_order == pytest.approx(p, rel=1e-9)
    assert e.extrapolated == pytest.approx(phi0, rel=1e-12)
    assert e.convergence == "monotonic"
    # Four meshes: least squares recovers the same order (Eca & Hoekstra 2014, the free-order
    # fit matches exactly).
    h4 = [1.0, r, r * r, r**3]
    ls = mb.least_squares(h4, [phi0 + a * x**p for x in h4])
    assert ls.order == pytest.approx(p, rel=1e-6)
    assert ls.convergence == "monotonic"


def test_two_mesh_gci_follows_roache():
    # Roache (1998), two meshes (formula from memory, as in the project's method notes):
    # U = 3 |phi2 - phi1| / (r^p_f - 1); r = 2, p_f = 2, |eps| = 0.3 -> U = 0.3.
    r = mb.two_mesh_gci([1.0, 2.0], [1.0, 1.3])
    assert r.uncertainty == pytest.approx(0.3, rel=1e-15)
    assert r.safety_factor == 3.0 and r.order == 2.0
    assert [w.code for w in r.warnings] == ["order_assumed"]


def test_two_mesh_gci_points_equal_the_scalar_call_and_the_analytic_error():
    # Manufactured phi = phi0 + alpha h^2 on two meshes: with the formal order 2 the
    # Richardson error estimate is exact (analytic), so the two-mesh GCI is 3 |alpha| h1^2
    # (Roache 1998, Fs = 3, from memory). Every row equals the scalar call bit for bit; equal
    # values and a zero finest value follow the scalar call's figures and None; a missing
    # value, which the scalar call refuses, gives NaN (as in estimate_points).
    rng = np.random.default_rng(19)
    h = [1.0, 1.4]
    n = 2000
    phi0 = rng.uniform(-2.0, 2.0, n)
    alpha = rng.uniform(-1.0, 1.0, n)
    phi = np.stack([phi0 + alpha * h[0] ** 2, phi0 + alpha * h[1] ** 2], axis=1)
    phi[3] = [np.nan, 1.0]
    phi[4] = [0.0, 0.5]
    phi[5] = [2.0, 2.0]
    r = mb.two_mesh_gci_points(h, phi)
    assert len(r) == n and [w.code for w in r.warnings] == ["order_assumed"]
    assert r.safety_factor == 3.0 and r.formal_order == 2.0
    with pytest.raises(mb.EstimateInputError):
        mb.two_mesh_gci(h, phi[3].tolist())
    for i in range(n):
        if i == 3:
            continue
        one = mb.two_mesh_gci(h, phi[i].tolist())
        for got, want in ((r.uncertainty[i], one.uncertainty), (r.relative[i], one.relative)):
            if want is None:
                assert math.isnan(got), i
            else:
                assert bits(float(got)) == bits(want), i
    exact = 3.0 * np.abs(alpha) * h[0] ** 2
    keep = np.ones(n, bool)
    keep[[3, 4, 5]] = False
    assert np.allclose(r.uncertainty[keep], exact[keep], rtol=1e-12, atol=1e-15)
    assert math.isnan(r.uncertainty[3]) and r.uncertainty[5] == 0.0
    assert math.isnan(r.relative[4])
    frame = r.to_frame()
    assert list(frame.columns) == ["uncertainty", "relative"] and len(frame) == n


def test_two_mesh_gci_points_refuse_bad_sizes_and_shapes():
    with pytest.raises(mb.EstimateInputError):
        mb.two_mesh_gci_points([1.0, 1.0], np.ones((3, 2)))
    with pytest.raises(mb.EstimateInputError):
        mb.two_mesh_gci_points([1.0, 2.0], np.ones((3, 3)))
    with pytest.raises(mb.EstimateInputError):
        mb.two_mesh_gci_points([1.0, 2.0, 4.0], np.ones((3, 2)))
    with pytest.raises(mb.EstimateInputError):
        mb.two_mesh_gci_points([1.0, 2.0], np.ones((3, 2)), formal_order=0.0)


def test_history_reduction_of_a_manufactured_history():
    # Manufactured: an exponential start-up decaying into white noise around 0.8 (seeded).
    rng = np.random.default_rng(2026)
    n = 4000
    t = np.arange(n, dtype=float)
    v = 0.8 + 0.5 * np.exp(-t / 60.0) + 0.002 * rng.standard_normal(n)
    r = mb.reduce_history(v)
    assert r.status == "steady"
    start = r.steady_start
    assert 0 < start < n // 2
    # The mean is the plain mean of the steady part, summed in order (exact arithmetic
    # reference: Python's left-to-right sum of the same doubles).
    steady = [float(x) for x in v[start:]]
    assert bits(r.mean) == bits(sum(steady) / len(steady))
    st = r.statistical
    # Source: scipy (PyPI) for Student's t at 95 % two-sided with the stated degrees of freedom.
    scipy_stats = pytest.importorskip("scipy.stats")
    t95 = scipy_stats.t.ppf(0.975, st["degrees_of_freedom"])
    assert st["expanded"] == pytest.approx(t95 * st["standard"], rel=1e-10)
    # White noise of sigma 0.002: the standard uncertainty of the mean is 0.002 / sqrt(samples)
    # (analytic); the factor 1.6 allows for the scatter of an estimate from 20 batch means
    # (common practice, no source).
    expect = 0.002 / math.sqrt(len(steady))
    assert expect / 1.6 < st["standard"] < expect * 1.6
    assert r.to_dict()["result"]["steady"]["method"] == "mser5"
