//! The MTBF model of `seam_analysis::mtbf` checked against references outside the project.
//!
//! Reference [HH]: D. M. Harris and S. L. Harris, "Digital Design and Computer Architecture"
//! (Morgan Kaufmann), chapter 3, the section on synchronizers (3.5.5 in the 2nd edition, from
//! memory). The book's MTBF of a two-flop synchronizer is
//!
//! ```text
//! MTBF = Tc · e^((Tc − t_setup)/τ) / (T0 · a)
//! ```
//!
//! EVERY figure taken from [HH] in this file (the equation, the worked example's inputs and its
//! printed answer, the "1 year ≈ π × 10^7 s" approximation, the section number) is FROM MEMORY:
//! no copy of the book was at hand when this test was written. Check them against the book.
//!
//! Mapping of the book's terms onto ours (DESIGN.md section 6):
//! * Tc, the synchronizer's clock period  → `dest_clock_hz = 1/Tc`, `stage_time_s = None`
//!   (stage 2 captures one full period after stage 1);
//! * T0 → `window_ps` (T_W); τ → `tau_ps`; t_setup → `setup_ps`;
//! * a, the number of times per second the asynchronous input *changes* → `f_data_hz`: our
//!   f_data is also a transition rate, so a maps onto it one to one (no factor of 2);
//! * the book's two flip-flops → `stages = 2`; the book's form has no clock-to-Q or routing
//!   term → `clock_to_q_ps = routing_ps = 0`.
//!
//! With those, ours is e^(Tc − t_setup)/τ / (T0 · (1/Tc) · a), which is the book's form.
//!
//! Reference [LW]: the Lambert W function (principal branch W0), as computed by the `lambert_w`
//! crate (an independent implementation, Fukushima's method), used to solve the book's
//! equation for Tc in closed form.

use lambert_w::lambert_w0;
use seam_analysis::mtbf::{
    max_dest_frequency_hz, synchronizer_mtbf, MtbfParams, MtbfResult, SyncInput, SECONDS_PER_YEAR,
};

/// [HH] closed form, evaluated independently of the library in plain f64 (seconds, Hz).
fn textbook_mtbf_s(tc_s: f64, t_setup_s: f64, tau_s: f64, t0_s: f64, a_per_s: f64) -> f64 {
    tc_s * ((tc_s - t_setup_s) / tau_s).exp() / (t0_s * a_per_s)
}

/// Our parameters for the book's setting: no clock-to-Q, no routing.
fn book_params(tau_ps: f64, t0_ps: f64, t_setup_ps: f64, target_s: f64) -> MtbfParams {
    MtbfParams {
        tau_ps,
        window_ps: t0_ps,
        setup_ps: t_setup_ps,
        clock_to_q_ps: 0.0,
        routing_ps: 0.0,
        target_years: target_s / SECONDS_PER_YEAR,
        units: 1.0,
        ..MtbfParams::default()
    }
}

fn book_chain(tc_s: f64, a_per_s: f64) -> SyncInput {
    SyncInput {
        stages: 2,
        dest_clock_hz: 1.0 / tc_s,
        f_data_hz: a_per_s,
        stage_time_s: None,
        bits: 1,
    }
}

fn our_log10_s(params: &MtbfParams, input: &SyncInput) -> f64 {
    match synchronizer_mtbf(params, input).expect("valid input") {
        MtbfResult::Seconds { log10_s, .. } => log10_s,
        other => panic!("expected a figure, got {other:?}"),
    }
}

// [HH] worked example (from memory): the traffic-light controller's sensor input goes through a
// synchronizer; traffic arrives on average 0.2 times per second; the synchronizer's flops have
// τ = 200 ps, T0 = 150 ps and t_setup = 500 ps; the question is the clock period for an MTBF
// of at least 1 year, with 1 year ≈ π × 10^7 s; the book solves by guess and check in a
// spreadsheet and prints Tc = 3.036 ns.
const HH_A_PER_S: f64 = 0.2;
const HH_TAU_PS: f64 = 200.0;
const HH_T0_PS: f64 = 150.0;
const HH_T_SETUP_PS: f64 = 500.0;
const HH_TARGET_S: f64 = std::f64::consts::PI * 1e7;
const HH_PRINTED_TC_NS: f64 = 3.036;

#[test]
fn model_equals_textbook_closed_form() {
    // [HH] equation vs our model over a grid around the book's values (and beyond them).
    let mut checked = 0;
    for &tau_ps in &[50.0, 200.0] {
        for &t0_ps in &[30.0, 150.0] {
            for &a in &[0.2, 1.0, 10.0, 1e3, 1e6] {
                let params = book_params(tau_ps, t0_ps, HH_T_SETUP_PS, HH_TARGET_S);
                let mut tc_ps = 600.0;
                while tc_ps <= 6000.0 {
                    let tc = tc_ps * 1e-12;
                    let book = textbook_mtbf_s(
                        tc,
                        HH_T_SETUP_PS * 1e-12,
                        tau_ps * 1e-12,
                        t0_ps * 1e-12,
                        a,
                    );
                    assert!(book.is_finite() && book > 0.0);
                    let ours = our_log10_s(&params, &book_chain(tc, a));
                    assert!(
                        (ours - book.log10()).abs() < 1e-9,
                        "τ={tau_ps} ps T0={t0_ps} ps a={a}/s Tc={tc_ps} ps: ours 10^{ours} s, book {book} s"
                    );
                    checked += 1;
                    tc_ps += 37.0;
                }
            }
        }
    }
    assert!(checked > 1000);
}

#[test]
fn textbook_example_minimum_period() {
    let tau = HH_TAU_PS * 1e-12;
    let t0 = HH_T0_PS * 1e-12;
    let ts = HH_T_SETUP_PS * 1e-12;
    let params = book_params(HH_TAU_PS, HH_T0_PS, HH_T_SETUP_PS, HH_TARGET_S);

    // (1) The book's own method, done independently of the library: guess and check Tc in
    // 1 ps steps (the book prints Tc to 1 ps) with the [HH] closed form.
    let mut scan_ps = 500.0;
    while textbook_mtbf_s(scan_ps * 1e-12, ts, tau, t0, HH_A_PER_S) < HH_TARGET_S {
        scan_ps += 1.0;
        assert!(scan_ps < 10_000.0, "scan ran away");
    }

    // (2) Our solver: highest destination frequency meeting the target with N = 2.
    let f_max = max_dest_frequency_hz(&params, &book_chain(3e-9, HH_A_PER_S)).expect("a limit");
    let ours_ps = 1e12 / f_max;
    // Our minimum period lies in the 1 ps step the scan found.
    assert!(
        ours_ps > scan_ps - 1.0 && ours_ps <= scan_ps,
        "ours {ours_ps} ps, guess-and-check step ({}, {scan_ps}] ps",
        scan_ps - 1.0
    );

    // (3) The printed answer, Tc = 3.036 ns (from memory). The book's claim is that this
    // period gives an MTBF of (at least) 1 year: check that claim with our model and with the
    // closed form.
    let printed_s = HH_PRINTED_TC_NS * 1e-9;
    let book_at_printed = textbook_mtbf_s(printed_s, ts, tau, t0, HH_A_PER_S);
    let ours_at_printed = our_log10_s(&params, &book_chain(printed_s, HH_A_PER_S));
    assert!((ours_at_printed - book_at_printed.log10()).abs() < 1e-9);
    assert!(
        ours_at_printed >= HH_TARGET_S.log10(),
        "printed Tc must meet 1 year"
    );

    // (4) Printed figure vs solved minimum. CAUTION, a known disagreement: with the inputs as
    // recalled above, the formula's exact minimum is 3.0296 ns (3.030 ns to the book's
    // precision), while the printed answer as recalled is 3.036 ns: 6 ps, 0.2 %, or 3 % in
    // MTBF (about 0.03 τ). Either one recalled figure is off, or the book's spreadsheet step
    // stopped above the exact minimum. So the match to the book's printed precision (1 ps)
    // is NOT asserted; the asserted bound is 10 ps (0.05 τ, a factor e^0.05 ≈ 1.05 in MTBF).
    // Whoever has the book: replace the figures and tighten this to 0.5 ps.
    assert!(
        (ours_ps - HH_PRINTED_TC_NS * 1e3).abs() <= 10.0,
        "ours {ours_ps} ps vs printed {} ps",
        HH_PRINTED_TC_NS * 1e3
    );
    assert!(
        ours_ps <= HH_PRINTED_TC_NS * 1e3,
        "the minimum cannot exceed a period that meets the target"
    );
}

/// [LW]: MTBF = Tc e^((Tc−ts)/τ)/(T0 a) = M  ⇒  (Tc/τ) e^(Tc/τ) = M T0 a e^(ts/τ)/τ
/// ⇒  Tc = τ · W0(M T0 a e^(ts/τ) / τ).
fn lambert_min_period_s(target_s: f64, t_setup_s: f64, tau_s: f64, t0_s: f64, a_per_s: f64) -> f64 {
    let z = target_s * t0_s * a_per_s * (t_setup_s / tau_s).exp() / tau_s;
    tau_s * lambert_w0(z)
}

#[test]
fn minimum_period_matches_lambert_w_solution() {
    let hour = 3600.0;
    let year = SECONDS_PER_YEAR;
    let mut checked = 0;
    for &target_s in &[hour, HH_TARGET_S, 1e3 * year, 1e6 * year] {
        for &a in &[0.2, 1e3, 1e6] {
            for &(tau_ps, t0_ps, ts_ps) in &[
                (200.0, 150.0, 500.0),
                (20.0, 50.0, 50.0),
                (50.0, 20.0, 100.0),
            ] {
                let (tau, t0, ts) = (tau_ps * 1e-12, t0_ps * 1e-12, ts_ps * 1e-12);
                let tc = lambert_min_period_s(target_s, ts, tau, t0, a);
                assert!(
                    tc.is_finite() && tc > 0.0,
                    "W0 failed for M={target_s} a={a}"
                );
                // Sanity of the Lambert solution itself: plugging it back gives M.
                let back = textbook_mtbf_s(tc, ts, tau, t0, a);
                assert!(
                    (back / target_s - 1.0).abs() < 1e-9,
                    "W0 round trip {back} vs {target_s}"
                );
                // Our model needs positive settling slack (Tc > ts with no clk->q/routing),
                // where it and the book's form coincide; keep to cases the book's form covers.
                if tc <= ts {
                    continue;
                }
                let params = book_params(tau_ps, t0_ps, ts_ps, target_s);
                let f = max_dest_frequency_hz(&params, &book_chain(tc, a)).expect("a limit");
                let ours = 1.0 / f;
                // Acceptance bound from the task brief: within 0.1 %.
                assert!(
                    (ours / tc - 1.0).abs() < 1e-3,
                    "M={target_s} s a={a}/s τ={tau_ps} T0={t0_ps} ts={ts_ps}: ours {ours} s, Lambert W {tc} s"
                );
                checked += 1;
            }
        }
    }
    assert!(checked >= 30, "only {checked} cases in range");

    // The worked example through W0 as well: same minimum as our solver (see above for how this
    // compares with the printed figure).
    let tc = lambert_min_period_s(
        HH_TARGET_S,
        HH_T_SETUP_PS * 1e-12,
        HH_TAU_PS * 1e-12,
        HH_T0_PS * 1e-12,
        HH_A_PER_S,
    );
    let params = book_params(HH_TAU_PS, HH_T0_PS, HH_T_SETUP_PS, HH_TARGET_S);
    let ours = 1.0 / max_dest_frequency_hz(&params, &book_chain(3e-9, HH_A_PER_S)).unwrap();
    assert!((ours / tc - 1.0).abs() < 1e-3, "ours {ours} vs W0 {tc}");
}
