"""Link availability over a declared variability: the ensemble planner and the [variability] section."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from scipy.optimize import brentq

import synthetic_eval
from aculink.errors import AculinkError
from aculink.planning import plan_rates
from aculink.planning.availability import available_rate, closure_interval, plan_availability, weighted_quantile
from aculink.site.loader import site_from_dict
from aculink.site.variability import Member, Variability, draw_members, enumerate_members, member_site

SYNTH = {"evaluate": synthetic_eval.evaluate, "modulations": ["bpsk", "qpsk"],
         "receivers": ["none", "linear", "dfe"]}


def _site_dict(**variability):
    """A small isovelocity shelf of our own (demo numbers, not a real place)."""
    data = {
        "name": "test shelf",
        "water": {"profile": "isovelocity", "sound_speed_mps": 1500.0},
        "seabed": {"depth_m": 40.0, "sediment": "medium sand"},
        "surface": {"wind_speed_mps": 4.0},
        "source": {"depth_m": 10.0, "level_db": 175.0},
        "receiver": {"depth_m": 20.0, "range_m": 1500.0},
        "modem": {"carrier_hz": 15000.0, "bandwidth_hz": 5000.0},
    }
    if variability:
        data["variability"] = variability
    return data


# --------------------------------------------------------------------------- the site section
def test_no_variability_section_means_none():
    assert site_from_dict(_site_dict()).variability is None


def test_variability_section_parses_and_builds_alternatives():
    site = site_from_dict(_site_dict(
        wind_speed_mps=[2.0, 10.0], wind_probability=[0.6, 0.4], range_tolerance_m=100.0, tide_m=[-1.0, 1.0],
        water=[{"weight": 3.0, "profile": "linear", "surface_speed_mps": 1510.0, "gradient_per_s": -0.2},
               {"weight": 1.0, "profile": "isovelocity", "sound_speed_mps": 1490.0}],
        seabed=[{"sediment": "clay", "weight": 1.0}]))
    var = site.variability
    assert var.factors == ("water", "wind", "position", "seabed", "tide")
    assert var.water_weights == pytest.approx((0.75, 0.25))
    assert var.water_sites[1].water.profile.speed(5.0) == pytest.approx(1490.0)
    assert var.seabed_sites[0].seabed.sediment == "clay"
    assert var.seabed_sites[0].seabed.depth_m[0] == 40.0
    assert not var.is_discrete


@pytest.mark.parametrize("section, words", [
    ({"wind_speed_mps": [2.0, 80.0]}, "[variability] wind_speed_mps[1] = 80"),
    ({"wind_speed_mps": [2.0, 8.0], "wind_probability": [0.5, 0.4]}, "must sum to 1"),
    ({"wind_speed_mps": [2.0], "wind_weibull_scale_mps": 8.0}, "not both"),
    ({"range_tolerance_m": -5.0}, "range_tolerance_m = -5"),
    ({"position_distribution": "gaussian"}, "allowed values are 'uniform', 'normal'"),
    ({"tidal_m": [1.0]}, "unknown key (did you mean 'tide_m'?)"),
    ({"seabed": [{"sediment": "cheese"}]}, "[variability] seabed[0]"),
    ({"seabed": [{"depth_m": 30.0}]}, "the depths are those of [seabed]"),
    ({"water": [{"profile": "isovelocity", "sound_speed_mps": 2500.0}]}, "[variability] water[0]"),
    ({"tide_m": [-45.0]}, None),
])
def test_variability_errors_are_one_line(section, words):
    if words is None:  # accepted by the parser, refused when a member would leave no water
        site = site_from_dict(_site_dict(**section))
        with pytest.raises(AculinkError, match="leaves no water"):
            member_site(site, Member(tide_m=-45.0))
        return
    with pytest.raises(AculinkError) as err:
        site_from_dict(_site_dict(**section))
    msg = str(err.value)
    assert "\n" not in msg
    assert words in msg, msg


def test_member_site_applies_wind_tide_and_source_offset():
    """Wind sets the Pierson-Moskowitz rms wave height [PiersonMoskowitz1964] (via the site
    stage); the tide deepens the water and the profile is carried down."""
    from aculink.site.surface import rms_wave_height_pierson_moskowitz

    site = site_from_dict(_site_dict(wind_speed_mps=[12.0], tide_m=[2.0], source_depth_tolerance_m=3.0))
    m = Member(wind_mps=12.0, tide_m=2.0, source_depth_offset_m=-100.0)
    moved = member_site(site, m)
    assert moved.surface.rms_height_m == pytest.approx(float(rms_wave_height_pierson_moskowitz(12.0)))
    assert moved.noise.wind_speed_mps == 12.0
    assert moved.seabed.depth_m[0] == pytest.approx(42.0)
    assert moved.water.profile.max_depth_m >= 42.0
    assert moved.source.depth_m == pytest.approx(0.5)  # kept inside the water
    assert member_site(site, Member()) is site


def test_draws_are_reproducible_and_nested():
    var = Variability(wind_weibull=(8.0, 2.0), range_tolerance_m=200.0, depth_tolerance_m=3.0)
    a = draw_members(var, 40, seed=3)
    assert a == draw_members(var, 40, seed=3)
    same = lambda ms: [dataclasses.replace(m, weight=0.0) for m in ms]  # noqa: E731
    assert same(a[:10]) == same(draw_members(var, 10, seed=3))
    assert a != draw_members(var, 40, seed=4)
    offsets = np.array([m.range_offset_m for m in a])
    assert np.all(np.abs(offsets) <= 200.0)


def test_weibull_wind_draws_follow_the_distribution():
    """The drawn winds follow Weibull(scale, shape) [Justus1978]: Kolmogorov-Smirnov test against
    scipy.stats.weibull_min (a general-purpose reference)."""
    from scipy import stats

    winds = [m.wind_mps for m in draw_members(Variability(wind_weibull=(7.0, 2.2)), 2000, seed=11)]
    assert stats.kstest(winds, stats.weibull_min(2.2, scale=7.0).cdf).pvalue > 0.01


def test_enumeration_weights_are_products_of_probabilities():
    var = Variability(wind_values_mps=(2.0, 9.0), wind_probabilities=(0.7, 0.3),
                      tide_values_m=(-1.0, 0.0, 1.0), tide_probabilities=(0.25, 0.5, 0.25))
    members = enumerate_members(var)
    assert len(members) == 6
    assert sum(m.weight for m in members) == pytest.approx(1.0)
    w = {(m.wind_mps, m.tide_m): m.weight for m in members}
    assert w[(9.0, 0.0)] == pytest.approx(0.15)


# --------------------------------------------------------------------------- statistics helpers
def test_closure_interval_matches_scipy_binomtest():
    """Clopper-Pearson intervals [ClopperPearson1934] against scipy.stats.binomtest's exact interval."""
    from scipy.stats import binomtest

    for k, n in [(0, 20), (3, 20), (17, 40), (64, 64)]:
        lo, hi = closure_interval(k, n)
        ref = binomtest(k, n).proportion_ci(confidence_level=0.95, method="exact")
        assert float(lo) == pytest.approx(ref.low, abs=1e-9)
        assert float(hi) == pytest.approx(ref.high, abs=1e-9)


def test_weighted_quantile_against_numpy():
    """Equal weights: numpy's 'inverted_cdf' quantile (a general-purpose reference)."""
    rng = np.random.default_rng(0)
    x = rng.normal(size=(37, 3))
    for q in (0.1, 0.5, 0.9):
        ref = np.quantile(x, q, axis=0, method="inverted_cdf")
        assert weighted_quantile(x, np.ones(37), q) == pytest.approx(ref)


def test_available_rate_is_non_increasing_in_probability():
    rng = np.random.default_rng(5)
    closure = rng.random((6, 30))
    rate = rng.uniform(100, 5000, (6, 30))
    prev = np.full(6, np.inf)
    for p in np.linspace(0.01, 0.99, 25):
        _, r = available_rate(closure, rate, p)
        assert np.all(r <= prev + 1e-9)
        prev = r


# --------------------------------------------------------------------------- the ensemble planner
def test_without_variability_equals_the_deterministic_plan():
    site = synthetic_eval.make_site()
    ranges = np.linspace(2000.0, 30000.0, 8)
    plan = plan_rates(site, ranges, **SYNTH)
    av = plan_availability(site, ranges, **SYNTH)
    assert av.attrs["ensemble"] == "nominal" and av.attrs["members"] == 1
    for p in av["probability"].values:
        np.testing.assert_array_equal(av["available_net_bit_rate_bps"].sel(probability=p).values,
                                      plan["net_bit_rate_bps"].values)
    np.testing.assert_array_equal(av["nominal_net_bit_rate_bps"].values, plan["net_bit_rate_bps"].values)
    closure = av["closure_probability"].values
    assert set(np.unique(closure)) <= {0.0, 1.0}


def _closes(site, r):
    """Margin of the synthetic evaluator's (dfe, 800 Bd, bpsk) candidate at range r, dB."""
    plan = plan_rates(site, [r], symbol_rates_baud=[800.0], **{**SYNTH, "modulations": ["bpsk"],
                                                                "receivers": ["dfe"]})
    return float(plan["candidate_margin_db"].values.ravel()[0]) - 3.0


def test_range_tolerance_closure_matches_the_exact_probability():
    """Exact probability: the candidate closes below a threshold range r* (its SNR falls with range),
    so with the receiver uniform in [r0 - T, r0 + T] the closure probability is (r* - r0 + T) / 2T.
    The ensemble's estimate must hold that value inside its 95 % Clopper-Pearson interval."""
    base = synthetic_eval.make_site()
    r_star = brentq(lambda r: _closes(base, r), 8000.0, 20000.0, xtol=0.1)
    r0, tol = r_star - 150.0, 500.0
    exact = (r_star - r0 + tol) / (2 * tol)
    site = dataclasses.replace(base, variability=Variability(range_tolerance_m=tol))
    # asked at the exact probability, the choice is never settled early: all 400 members run
    av = plan_availability(site, [r0], probability=exact, symbol_rates_baud=[800.0], members=400,
                           tolerance=0.01, seed=2,
                           attribution=False, **{**SYNTH, "modulations": ["bpsk"], "receivers": ["dfe"]})
    est = float(av["closure_probability"].values.ravel()[0])
    lo = float(av["closure_probability_low"].values.ravel()[0])
    hi = float(av["closure_probability_high"].values.ravel()[0])
    assert av.attrs["ensemble"] == "drawn" and av.attrs["members"] == 400
    assert lo <= exact <= hi, (exact, est, lo, hi)
    # available at p below the exact probability, not above it
    table = av["available_net_bit_rate_bps"].isel(range=0)
    assert float(table.sel(probability=0.5)) == pytest.approx(680.0)
    assert float(table.sel(probability=0.99)) == 0.0


def test_a_settled_choice_stops_the_draws_early():
    """A candidate whose interval already excludes the asked probability needs no more members."""
    base = synthetic_eval.make_site()
    r_star = brentq(lambda r: _closes(base, r), 8000.0, 20000.0, xtol=0.1)
    site = dataclasses.replace(base, variability=Variability(range_tolerance_m=500.0))
    av = plan_availability(site, [r_star - 150.0], probability=0.99, symbol_rates_baud=[800.0], members=400,
                           tolerance=0.01, seed=2, attribution=False,
                           **{**SYNTH, "modulations": ["bpsk"], "receivers": ["dfe"]})
    assert av.attrs["members"] < 100 and av.attrs["converged"] == 1


def test_same_seed_same_numbers_and_stopping_rule():
    site = dataclasses.replace(synthetic_eval.make_site(), variability=Variability(
        range_tolerance_m=400.0, source_depth_tolerance_m=5.0))
    kw = {**SYNTH, "members": 64, "tolerance": 0.2, "seed": 9}
    a = plan_availability(site, [5000.0, 13000.0], **kw)
    b = plan_availability(site, [5000.0, 13000.0], **kw)
    xr_equal = a.drop_vars("member_error").identical(b.drop_vars("member_error"))
    assert xr_equal
    assert a.attrs["members"] < 64 and a.attrs["converged"] == 1  # a loose tolerance stops early
    assert a.sizes["factor"] == 1 and str(a["factor"].values[0]) == "position"


def test_attribution_names_the_factor_that_varies():
    """With the source depth fixed by the synthetic evaluator's physics and only position varying
    across the closure threshold, holding the position at nominal removes all of the spread."""
    base = synthetic_eval.make_site()
    r_star = brentq(lambda r: _closes(base, r), 8000.0, 20000.0, xtol=0.1)
    site = dataclasses.replace(base, variability=Variability(range_tolerance_m=800.0))
    av = plan_availability(site, [r_star], members=48, seed=1, **SYNTH)
    assert float(av["spread_share"].sel(factor="position")[0]) == pytest.approx(1.0)


@pytest.mark.slow
def test_two_state_wind_matches_each_state_on_the_real_chain():
    """Closure probabilities of a two-state wind (0.7 at 1 m/s, 0.3 at 14 m/s) equal
    0.7 closes(calm) + 0.3 closes(gale), each state planned alone by the deterministic planner
    (total probability; the ensemble is enumerated, so the equality is exact)."""
    from aculink.site.surface import site_with_wind

    site = site_from_dict(_site_dict(wind_speed_mps=[1.0, 14.0], wind_probability=[0.7, 0.3]))
    ranges = [1000.0, 3000.0]
    kw = {"modulations": ["bpsk", "qpsk", "16qam"], "receivers": ["none", "dfe"]}
    av = plan_availability(site, ranges, attribution=False, **kw)
    assert av.attrs["ensemble"] == "enumerated" and av.attrs["members"] == 2
    expected = 0.0
    for wind, prob in ((1.0, 0.7), (14.0, 0.3)):
        plan = plan_rates(site_with_wind(site, wind), ranges, **kw)
        margin = plan["candidate_margin_db"].values
        ber = plan["candidate_ber_predicted"].values
        closes = np.nan_to_num((margin >= 3.0) & (ber <= 1e-4) & (plan["candidate_net_bit_rate_bps"].values > 0))
        known = np.isfinite(margin)  # the deterministic plan skips candidates that cannot win
        expected = expected + prob * np.where(known, closes, np.nan)
    known = np.isfinite(expected)
    assert known.sum() > 4
    np.testing.assert_allclose(av["closure_probability"].values[known], expected[known], atol=1e-12)


def test_attribution_costs_at_most_its_subset_per_factor():
    """Holding a factor at nominal re-runs at most ATTRIBUTION_MEMBERS members (the cost bound the
    README states), and the share is still a fraction in [0, 1]."""
    from aculink.planning.availability import ATTRIBUTION_MEMBERS

    site = dataclasses.replace(synthetic_eval.make_site(), variability=Variability(
        range_tolerance_m=400.0, source_depth_tolerance_m=5.0, wind_values_mps=(2.0, 9.0),
        wind_probabilities=(0.5, 0.5)))
    av = plan_availability(site, [9000.0], members=40, tolerance=0.001, seed=4, **SYNTH)
    n, n_f = av.attrs["members"], av.sizes["factor"]
    assert n == 40 and n_f == 2 and av.attrs["attribution_members"] == ATTRIBUTION_MEMBERS
    assert av.attrs["evaluations"] <= n + n_f * ATTRIBUTION_MEMBERS + 1
    share = av["spread_share"].values
    assert np.all((share >= 0) & (share <= 1))


@pytest.mark.parametrize("name", ["shelf_summer", "shelf_winter", "harbour_approach", "polar_calm",
                                  "deep_channel"])
def test_bundled_sites_declare_their_variability(name):
    """Every bundled environment carries a [variability] section (demo numbers) that the loader
    accepts and that makes at least one factor vary."""
    from aculink.site.bundled import environments_dir
    from aculink.site.loader import load_site

    site = load_site(environments_dir() / f"{name}.toml")
    assert site.variability is not None and len(site.variability.factors) >= 1


@pytest.mark.slow
def test_members_on_a_local_dask_cluster_give_the_serial_numbers():
    """Members evaluated on two local Dask workers give the serial dataset exactly (each member
    depends only on its own draw; results are placed by member, not by arrival order)."""
    site = dataclasses.replace(synthetic_eval.make_site(), variability=Variability(
        range_tolerance_m=400.0, wind_values_mps=(2.0, 9.0), wind_probabilities=(0.5, 0.5)))
    kw = {**SYNTH, "members": 24, "tolerance": 0.001, "seed": 5}
    serial = plan_availability(site, [5000.0, 12000.0], **kw)
    local = plan_availability(site, [5000.0, 12000.0], workers=2, **kw)
    assert serial.drop_vars("member_error").identical(local.drop_vars("member_error"))


def test_bad_workers_are_refused_before_any_member_runs():
    site = dataclasses.replace(synthetic_eval.make_site(), variability=Variability(range_tolerance_m=400.0))
    calls = []

    def counting(*args, **kw):
        calls.append(1)
        return synthetic_eval.evaluate(*args, **kw)

    with pytest.raises(AculinkError, match="workers"):
        plan_availability(site, [5000.0], members=8, workers=-1, evaluate=counting,
                          modulations=["bpsk"], receivers=["dfe"])
    assert not calls


def test_cli_availability_table_csv_and_json(tmp_path, capsys):
    """`plan --availability` on a bundled site: the table with its reading line and caution, the
    CSV with the rate-at-p columns, and one JSON object with the same rows (contract)."""
    import csv
    import json

    from aculink.cli import main
    from aculink.site.bundled import bundled_site_path

    site = str(bundled_site_path("shelf_winter"))
    args = ["plan", site, "--availability", "0.9", "--members", "2", "--ranges-m", "1000,2000"]
    out_csv = tmp_path / "a.csv"
    assert main(args + ["--csv", str(out_csv)]) == 0
    text = capsys.readouterr().out
    assert "link availability" in text and "Reading:" in text and "Caution:" in text
    with open(out_csv, newline="") as fh:
        header = next(csv.reader(fh))
    assert header[0] == "range_m" and {"rate_at_50_bps", "rate_at_90_bps", "rate_at_99_bps"} <= set(header)
    assert main(args + ["--json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert [r["range_m"] for r in doc["rows"]] == [1000.0, 2000.0] and doc["members"] == 2
