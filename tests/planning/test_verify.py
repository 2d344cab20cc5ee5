"""The planner's Monte Carlo verdict (`plan --verify`): its statistics, its stability, its flags."""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
import scipy.stats
from scipy.special import erfc

from aculink.cli.plan import display_row, verify_summary
from aculink.modem.constellations import MODULATIONS as BITS
from aculink.planning import plan_rates, plan_rows
from aculink.planning.table import (dispersion, pooled_interval, run_batches, verify_bit_budget, verify_plan,
                                    verify_verdict)
from aculink.site.loader import load_site

import synthetic_eval

SITE_FILE = Path(__file__).with_name("isovelocity_silt.toml")


@pytest.fixture(scope="module")
def site():
    return load_site(SITE_FILE)


@pytest.mark.parametrize("k, n", [(0, 40000), (3, 40000), (57, 12000), (500, 1000)])
def test_interval_is_the_exact_binomial_one(k, n):
    """With independent errors (dispersion 1) the interval is the exact Clopper-Pearson one, as
    scipy.stats.binomtest(...).proportion_ci(method="exact") gives it (Clopper and Pearson 1934,
    Biometrika 26, 404-413)."""
    ref = scipy.stats.binomtest(k, n).proportion_ci(confidence_level=0.95, method="exact")
    lo, hi = pooled_interval(k, n, 1.0)
    assert lo == pytest.approx(ref.low, rel=1e-9, abs=1e-15) and hi == pytest.approx(ref.high, rel=1e-9)


def test_dispersion_is_the_pearson_chi_square_over_its_degrees_of_freedom():
    """The dispersion is Pearson's chi-square of the 2 x B table (errors, correct bits) per batch
    over B - 1 (McCullagh and Nelder 1989, Generalized Linear Models, sec. 4.5), checked against
    scipy.stats.chi2_contingency without continuity correction; bursty counts give > 1, and
    counts closer to their mean than binomial are floored at 1."""
    errors = [50, 0, 2, 1, 0, 3]
    bits = [10000, 10000, 12000, 10000, 9000, 10000]
    table = np.array([errors, np.subtract(bits, errors)])
    chi2 = scipy.stats.chi2_contingency(table, correction=False).statistic
    assert dispersion(errors, bits) == pytest.approx(chi2 / (len(errors) - 1), rel=1e-12)
    assert dispersion(errors, bits) > 10.0
    assert dispersion([10, 10, 10, 10], [10000] * 4) == 1.0
    assert dispersion([0, 0, 0], [1000] * 3) == 1.0


def test_a_burst_widens_the_interval():
    """Fifty errors in one of ten frames: the binomial interval alone would call a 6e-4 BER sure
    (lower end above 1e-4); with the dispersion of the batch counts the lower end drops below
    1e-4, so the run cannot say the target is missed (quasi-binomial model, McCullagh and
    Nelder 1989, sec. 4.5)."""
    errors, bits = [50] + [0] * 9, [8000] * 10
    naive = pooled_interval(50, 80000, 1.0)
    wide = pooled_interval(50, 80000, dispersion(errors, bits))
    assert naive[0] > 1e-4 and wide[0] < 1e-4 < wide[1]


def test_first_look_is_enough_for_an_error_free_run():
    """The zero-error Clopper-Pearson bound 1 - (alpha/2)^(1/n) (Clopper and Pearson 1934) reaches
    the target at n = ln(alpha/2) / ln(1 - target), 36,887 bits for 1e-4 at 95 % (closed form);
    the first look simulates at least that, the cap more."""
    for target in (1e-3, 1e-4, 1e-5):
        first, cap = verify_bit_budget(target)
        exact = math.log(0.025) / math.log1p(-target)
        assert exact <= first < 1.5 * exact and cap > first
        assert scipy.stats.binomtest(0, first).proportion_ci(method="exact").high <= target


@pytest.mark.parametrize("k, n, word", [
    (0, 50000, "agrees"),        # nothing seen, enough bits: the target 1e-4 is met
    (0, 20000, "undecided"),     # nothing seen, too few bits to tell
    (40, 50000, "fails"),        # 8e-4, interval well above 1e-4
    (12, 1000000, "optimistic"),  # 1.2e-5 meets 1e-4 but a 25 dB prediction says ~1e-80
    (1, 60000, "agrees"),        # one stray error: below what the run can resolve
])
def test_verdict_words(k, n, word):
    """The verdict on counts built by hand against a target of 1e-4 and a QPSK prediction of
    25 dB output SNR (BER Q(sqrt(Es/N0)), Proakis and Salehi 2008, sec. 4.3); the interval
    decisions are those of scipy.stats.binomtest's exact interval."""
    got, note = verify_verdict(k, n, 1e-80, 25.0, "qpsk", 1e-4)
    assert got == word
    ci = scipy.stats.binomtest(k, n).proportion_ci(method="exact")
    assert (got == "fails") == (ci.low > 1e-4) and (got == "undecided") == (ci.low <= 1e-4 < ci.high)
    assert (note == "") == (word == "agrees")


def q(x):
    return 0.5 * erfc(x / math.sqrt(2.0))


@pytest.mark.slow
def test_measured_ber_on_awgn_contains_the_exact_value():
    """BPSK on a single-tap channel in white noise has BER Q(sqrt(2 Es/N0)) (Proakis and Salehi
    2008, Digital Communications, 5th ed., eq. 4.3-13). The batches of a verification run, seeded
    from the receiver, must hold the exact value in their 95 % interval, and the verdict against
    a target above the interval is "agrees", below it "fails"."""
    from aculink.modem import simulate_link

    es_n0_db = 6.0
    exact = q(math.sqrt(2.0 * 10 ** (es_n0_db / 10)))  # 2.39e-3

    def run(s, n_sym):
        return simulate_link(np.array([1.0 + 0j]), symbol_rate_baud=1000.0, modulation="bpsk", receiver="none",
                             snr_db=es_n0_db, n_symbols=n_sym, max_errors=10 ** 12, seed=s, time_varying=False)

    out = run_batches(run, np.random.SeedSequence(3, spawn_key=(1000, 20)), 20000, 20000, "bpsk", 1e-2)
    lo, hi = pooled_interval(out["bit_errors"], out["bits"], out["dispersion"])
    assert lo <= exact <= hi and out["bits"] >= 20000
    assert verify_verdict(out["bit_errors"], out["bits"], exact, es_n0_db, "bpsk", 1e-2)[0] == "agrees"
    assert verify_verdict(out["bit_errors"], out["bits"], exact, es_n0_db, "bpsk", 1e-3)[0] == "fails"


def optimistic_evaluate(site, ranges_m, depths_m, grid, target_ber, margin_db=3.0):
    """A deliberately wrong evaluator: the synthetic one with 40 dB added to every output SNR, so
    the planner picks a configuration the real link cannot carry."""
    out = synthetic_eval.evaluate(site, ranges_m, depths_m, grid, target_ber, margin_db)
    out["snr_out_db"] = out["snr_out_db"] + 40.0
    lin = 10 ** (out["snr_out_db"] / 10)
    for c, mod in enumerate(grid.modulations):
        out["ber_predicted"][..., c] = synthetic_eval.ber(mod, lin[..., c])
    return out


@pytest.mark.slow
def test_verify_flags_a_rate_that_the_link_cannot_carry(site):
    """The wrong evaluator promises QPSK at the top symbol rate with no equalizer at 6 km; the real
    Monte Carlo measures a BER far above 1e-4 (the band SNR there is a few dB and the multipath
    is unequalised: a QPSK symbol error rate near 1/2, Proakis and Salehi 2008, sec. 4.3). The row
    must read "fails", the table must mark its rate, and the summary must say not to plan on it."""
    ds = plan_rates(site, [6000.0], depth_m=30.0, receivers=["none"], modulations=["bpsk", "qpsk"],
                    evaluate=optimistic_evaluate, verify=True, seed=0)
    row = plan_rows(ds)[0]
    assert row["net_bit_rate_bps"] > 0 and row["ber_predicted"] < 1e-10
    assert row["verify_verdict"] == "fails" and row["ber_measured"] > 1e-2
    assert "above the target" in row["verify_note"]
    assert display_row(row)["rate_kbps"].endswith("!")
    assert any("do not plan on it" in line for line in verify_summary([row]))


@pytest.mark.slow
def test_verdict_does_not_change_with_the_seed_or_the_range_list(site):
    """Seed stability (the point of the adaptive run, common practice, no source): on a fixed
    configuration at 2 km, the verdict is the same for seeds 0-3; and a row verified alone or
    among other ranges gets exactly the same counts (its channel and seed depend on its own
    position only)."""
    kw = dict(depth_m=30.0, receivers=["dfe"], modulations=["qpsk"], symbol_rates_baud=[1600.0],
              target_ber=1e-3, margin_db=0.0, verify=True)
    words = set()
    for seed in range(4):
        row = plan_rows(plan_rates(site, [2000.0], seed=seed, **kw))[0]
        assert row["net_bit_rate_bps"] > 0
        words.add(row["verify_verdict"])
    assert words == {"agrees"}
    alone = plan_rows(plan_rates(site, [2000.0], seed=5, **kw))[0]
    among = plan_rows(plan_rates(site, [1000.0, 2000.0], seed=5, **kw))[1]
    assert (alone["bits_measured"], alone["ber_measured"]) == (among["bits_measured"], among["ber_measured"])


def test_verify_uses_the_given_simulator_and_stops_when_decided(site):
    """With a simulator that never errs, the run stops at the first look (the bits the zero-error
    Clopper-Pearson bound needs, Clopper and Pearson 1934) and agrees; with one that errs on
    every fourth bit it fails at the first look too; neither needs the cap."""
    ds = plan_rates(site, [2000.0], depth_m=30.0, receivers=["dfe"], modulations=["bpsk", "qpsk"],
                    evaluate=synthetic_eval.evaluate)
    assert plan_rows(ds)[0]["net_bit_rate_bps"] > 0

    class Result:
        def __init__(self, n_sym, k, share):
            self.bits = n_sym * k
            self.bit_errors = int(self.bits * share)
            self.symbols = n_sym
            self.snr_out_db = 20.0
            self.snr_predicted_db = 20.0

    for share, word in ((0.0, "agrees"), (0.25, "fails")):
        def fake(channel, *, n_symbols, modulation, **kw):
            return Result(n_symbols, BITS[modulation], share)  # noqa: B023 (called inside the loop)

        row = plan_rows(verify_plan(site, ds, seed=0, simulate=fake))[0]
        first, cap = verify_bit_budget(1e-4)
        assert row["verify_verdict"] == word and first <= row["bits_measured"] < 2 * first
