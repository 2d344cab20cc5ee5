"""The rate search on arrays: candidate ladder, margin, selection and tie rules."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy.special import erfc

import synthetic_eval
from aculink.errors import AculinkError
from aculink.planning import search


def test_ladder_fills_the_band():
    """Rs = B/(1+beta) is the fastest raised-cosine rate in B (Proakis and Salehi 2008, sec. 9.2),
    then a halving ladder."""
    rates = search.candidate_symbol_rates(6000.0, 0.25, steps=4)
    np.testing.assert_allclose(rates, [4800.0, 2400.0, 1200.0, 600.0])
    assert rates[0] * (1 + 0.25) == pytest.approx(6000.0)


@pytest.mark.parametrize("bad", [dict(bandwidth_hz=0.0), dict(rolloff=1.5), dict(steps=0)])
def test_ladder_rejects_bad_input(bad):
    kw = dict(bandwidth_hz=6000.0, rolloff=0.25, steps=3) | bad
    with pytest.raises(AculinkError):
        search.candidate_symbol_rates(kw.pop("bandwidth_hz"), kw.pop("rolloff"), **kw)


def test_margin_rule_matches_closed_form_bpsk():
    """BPSK BER = Q(sqrt(2 Es/N0)) (Proakis and Salehi 2008, eq. 4.3-13): a candidate is workable
    exactly when the BER at (output SNR - margin) still meets the target."""
    target, margin = 1e-4, 3.0
    need = synthetic_eval.required_db("bpsk", target)
    snr = np.linspace(need - 5, need + 8, 131)
    ber = 0.5 * erfc(np.sqrt(10 ** (snr / 10)))
    shape = (snr.size, 1, 1, 1)
    sel = search.select_workable(snr.reshape(shape), ber.reshape(shape), np.ones(shape),
                                 np.array([need]), target_ber=target, margin_db=margin)
    ber_at_margin = 0.5 * erfc(np.sqrt(10 ** ((snr - margin) / 10)))
    expect = ber_at_margin <= target * (1 + 1e-9)
    got = sel["workable"].reshape(-1)
    # Away from the threshold (within 1e-6 dB of it either answer is right) they agree.
    away = np.abs(snr - need - margin) > 1e-6
    np.testing.assert_array_equal(got[away], expect[away])
    np.testing.assert_allclose(sel["margin_db"].reshape(-1), snr - need)


def test_selection_highest_rate_then_margin():
    """Highest net rate wins; a tie goes to the larger margin (the rule this planner documents)."""
    # one position, 2 receivers x 1 rate x 3 modulations
    snr = np.array([[[20.0, 20.0, 20.0]], [[25.0, 25.0, 10.0]]])[None]
    ber = np.full_like(snr, 1e-6)
    rate = np.array([[[100.0, 200.0, 300.0]], [[100.0, 200.0, 300.0]]])[None]
    need = np.array([5.0, 8.0, 12.0])
    sel = search.select_workable(snr, ber, rate, need, target_ber=1e-4, margin_db=3.0)
    # rate 300 is workable only with receiver 0 (margin 8); receiver 1 has margin -2 there
    assert sel["best"][0] == np.ravel_multi_index((0, 0, 2), (2, 1, 3))
    rate[0, 1, 0, 2] = 300.0
    snr[0, 1, 0, 2] = 30.0
    sel = search.select_workable(snr, ber, rate, need, target_ber=1e-4, margin_db=3.0)
    assert sel["best"][0] == np.ravel_multi_index((1, 0, 2), (2, 1, 3))
    np.testing.assert_array_equal(sel["best_by_receiver"][0], [2, 2])


def test_nothing_workable_gives_zero_rate(flat_site):
    """A position where every candidate misses the target has rate 0 and empty names (no source:
    the planner's documented output)."""
    grid = search.CandidateGrid((1000.0,), ("bpsk",), ("none",))
    block = synthetic_eval.evaluate(flat_site, [2e5], [30.0], grid, 1e-4)
    out = search.summarise_block(block, grid, target_ber=1e-4, margin_db=3.0)
    assert out["best_rate_bps"][0, 0] == 0.0
    assert out["best_modulation"][0, 0] == "" and np.isnan(out["best_symbol_rate_baud"][0, 0])


def test_failing_point_is_recorded_not_raised(flat_site):
    """A failing position gets its one-line error; the others still get results (regression of the
    fallback rule, no outside source)."""
    grid = search.CandidateGrid((1000.0, 500.0), synthetic_eval.MODULATIONS, synthetic_eval.RECEIVERS)
    depths = [10.0, synthetic_eval.BAD_DEPTH_M, 20.0]
    block = search.evaluate_safely(synthetic_eval.evaluate, flat_site, [1000.0, 2000.0], depths, grid, 1e-4, 3.0)
    assert list(block["error"][:, 1]) == ["ValueError: synthetic failure at depth 13.0 m"] * 2
    assert np.all(block["error"][:, [0, 2]] == "")
    assert np.all(np.isfinite(block["snr_out_db"][:, [0, 2]]))
    assert np.all(np.isnan(block["snr_out_db"][:, 1]))


def test_receiver_choice():
    assert search.resolve_receivers("all", ("none", "dfe")) == ("none", "dfe")
    assert search.resolve_receivers("dfe", ("none", "dfe")) == ("dfe",)
    with pytest.raises(AculinkError, match="did you mean 'dfe'"):
        search.resolve_receivers("dfee", ("none", "dfe"))


# ---------------------------------------------------------------------------------------------
# The real-stage evaluator against its slow twin
# ---------------------------------------------------------------------------------------------

def _loop_evaluate(site, ranges, depths, grid, target_ber, margin_db):
    """The slow, obviously correct twin of ``search.evaluate_block``: every candidate through
    ``predict_link`` one at a time, nothing skipped, and the channel stage's full statistics."""
    from aculink.channel import Channel, link_budget
    from aculink.modem import predict_link
    from aculink.propagation import find_arrivals

    out = search.empty_block(len(ranges), len(depths), grid)
    out["snr_required_db"] = search.modem_required_snr_db(grid.modulations, target_ber)
    arrivals = find_arrivals(site, ranges, depths, freq_hz=search.band_frequencies(site))
    for i, r in enumerate(ranges):
        for j, z in enumerate(depths):
            channel = Channel.from_arrivals(arrivals, site, range_m=r, depth_m=z)
            budget = link_budget(site.with_geometry(range_m=r, depth_m=z), channel)
            out["snr_band_db"][i, j] = float(budget.snr_band_db)
            out["tl_db"][i, j] = float(budget.tl_db)
            out["spread_90_s"][i, j] = float(channel.statistics()["spread_90_s"])
            for a, rx in enumerate(grid.receivers):
                for b, rs in enumerate(grid.symbol_rates_baud):
                    for c, mod in enumerate(grid.modulations):
                        p = predict_link(channel, budget, rs, mod, rx, rolloff=site.modem.rolloff)
                        out["snr_out_db"][i, j, a, b, c] = p.snr_out_db
                        out["ber_predicted"][i, j, a, b, c] = p.ber_predicted
                        out["net_bit_rate_bps"][i, j, a, b, c] = p.net_bit_rate_bps
    return out


@pytest.mark.slow
def test_fast_evaluator_equals_the_candidate_loop():
    """The exact skip rule and the 90% spread computed alone give the same choice at every
    position, and the same values for every candidate evaluated, as the straightforward loop
    over every candidate with the channel stage's full statistics (fast code against its slow
    twin)."""
    from aculink.site.loader import load_site
    from aculink.site.model import Surface
    from aculink.planning.sweep import candidate_grid

    site = load_site(Path(__file__).with_name("isovelocity_silt.toml"))
    site = site.replace(surface=Surface(wind_speed_mps=6.0, rms_height_m=0.3))  # a rough sea too
    grid = candidate_grid(site)
    ranges, depths = np.array([600.0, 3000.0, 9000.0]), np.array([25.0, 80.0])
    tb, md = site.modem.target_ber, site.modem.margin_db
    fast = search.evaluate_block(site, ranges, depths, grid, tb, md)
    # the same single BLAS thread in both: this test is about the skip rule
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"):
        slow = _loop_evaluate(site, ranges, depths, grid, tb, md)
    assert np.all(fast["error"] == "")
    for key in search.POINT_FIELDS + ("snr_required_db",):
        np.testing.assert_array_equal(fast[key], slow[key], err_msg=key)
    done = np.isfinite(fast["snr_out_db"])
    assert 0 < done.sum() < done.size, "the skip rule should have skipped something here"
    np.testing.assert_array_equal(fast["snr_out_db"][done], slow["snr_out_db"][done])
    np.testing.assert_array_equal(fast["net_bit_rate_bps"][done], slow["net_bit_rate_bps"][done])
    np.testing.assert_array_equal(fast["ber_predicted"][done], slow["ber_predicted"][done])
    a = search.summarise_block(fast, grid, target_ber=tb, margin_db=md)
    b = search.summarise_block(slow, grid, target_ber=tb, margin_db=md)
    for key in ("best_rate_bps", "best_symbol_rate_baud", "best_snr_out_db", "best_margin_db",
                "rate_by_receiver_bps"):
        np.testing.assert_array_equal(a[key], b[key], err_msg=key)
    for key in ("best_modulation", "best_receiver"):
        assert a[key].tolist() == b[key].tolist(), key
    assert (a["best_rate_bps"] > 0).any(), "the test needs at least one workable position"
