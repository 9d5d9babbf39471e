//! Properties of the MTBF figures Seam computes for real designs, end to end in process: a
//! generated Verilog chain is parsed, elaborated and analysed (`seam_analysis::analyze`) with a
//! generated seam.toml, and the per-synchronizer table (`Analysis::mtbf`) is read back.
//!
//! References: the DESIGN.md section 6 model MTBF = e^(t_r/τ)/(T_W·f_clk·f_data),
//! t_r = (N − 1)(T − t_setup − t_clk→q − t_routing), from which the properties follow
//! (∂/∂N ≥ 0 when the slack is positive, ∂/∂f_clk < 0, ∂/∂f_data < 0); random inputs and
//! shrinking from the `proptest` crate (an outside property-testing library).

use proptest::prelude::*;
use seam_analysis::config::parse_config;
use seam_analysis::mtbf::format_years;
use seam_analysis::parse::{parse_file, MacroTable, ParseOptions};
use seam_analysis::report::{Analysis, SyncEstimate, SyncMtbf};

/// A chain of `n` stages from the asynchronous `din` on `clk_d`, then a counter (logic, so the
/// counter is no further stage).
fn chain_rtl(n: u32) -> String {
    let regs: Vec<String> = (1..=n).map(|k| format!("s{k}")).collect();
    let mut body = String::from("    s1 <= din;\n");
    for k in 2..=n {
        body.push_str(&format!("    s{k} <= s{};\n", k - 1));
    }
    format!(
        "// Weather buoy: the anemometer pulse into the logger clock.\n\
         module pp_buoy (input wire clk_d, input wire din, output reg [3:0] cnt);\n  reg {};\n\
         always @(posedge clk_d) begin\n{body}    if (s{n}) cnt <= cnt + 4'd1;\n  end\nendmodule\n",
        regs.join(", ")
    )
}

#[derive(Clone, Copy, Debug)]
struct Case {
    n: u32,
    f_clk: f64,
    a: f64,
    tau_ps: f64,
    setup_ps: f64,
    cq_ps: f64,
}

fn analyse(c: &Case) -> Analysis {
    let rtl = chain_rtl(c.n);
    let toml = format!(
        "[design]\ntop = [\"pp_buoy\"]\n[clocks]\nclk_d = {{ frequency = {:e} }}\n\
         [inputs]\ndin = \"async\"\n[mtbf]\ntau_ps = {:e}\nsetup_ps = {:e}\nclock_to_q_ps = {:e}\n\
         async_toggle = {:e}\n",
        c.f_clk, c.tau_ps, c.setup_ps, c.cq_ps, c.a
    );
    let config = parse_config("seam.toml", &toml).unwrap_or_else(|e| panic!("{e}\n{toml}"));
    let model = parse_file(
        "pp_buoy.v",
        "pp_buoy.v",
        rtl.as_bytes(),
        &MacroTable::with_defines([("SYNTHESIS", None)]),
        &ParseOptions::default(),
    )
    .model;
    seam_analysis::analyze(&[model], &config)
}

fn the_sync(a: &Analysis) -> &SyncMtbf {
    assert_eq!(a.mtbf.synchronizers.len(), 1, "{:#?}", a.mtbf);
    &a.mtbf.synchronizers[0]
}

/// A total order on estimates: no slack < figure (by value) < unbounded.
fn rank(s: &SyncMtbf) -> (u8, f64) {
    match s.estimate {
        SyncEstimate::NoSettlingSlack { .. } => (0, 0.0),
        SyncEstimate::Figure { log10_s, .. } => (1, log10_s),
        SyncEstimate::Unbounded => (2, 0.0),
        SyncEstimate::Unknown { .. } => panic!("every frequency is given: {s:?}"),
    }
}

fn not_lower(before: &SyncMtbf, after: &SyncMtbf) -> bool {
    let (ka, la) = rank(before);
    let (kb, lb) = rank(after);
    kb > ka || (kb == ka && lb >= la - 1e-9 * la.abs().max(1.0))
}

fn case() -> impl Strategy<Value = Case> {
    (
        2u32..6,
        6.5f64..9.5,  // log10 f_clk: 3 MHz to 3 GHz
        -2.0f64..8.0, // log10 transitions per second
        0.5f64..2.5,  // log10 τ in ps: 3 ps to 300 ps
        0.0f64..200.0,
        0.0f64..200.0,
    )
        .prop_map(|(n, lf, la, lt, setup_ps, cq_ps)| Case {
            n,
            f_clk: 10f64.powf(lf),
            a: 10f64.powf(la),
            tau_ps: 10f64.powf(lt),
            setup_ps,
            cq_ps,
        })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 24, ..ProptestConfig::default() })]

    #[test]
    fn more_stages_never_lower_the_mtbf(c in case()) {
        let a = analyse(&c);
        let b = analyse(&Case { n: c.n + 1, ..c });
        prop_assert_eq!(the_sync(&b).stages, c.n + 1);
        prop_assert!(not_lower(the_sync(&a), the_sync(&b)), "{:?}: {:?} -> {:?}", c, the_sync(&a).estimate, the_sync(&b).estimate);
    }

    #[test]
    fn a_slower_destination_clock_never_lowers_the_mtbf(c in case(), k in 1.01f64..10.0) {
        let a = analyse(&c);
        let b = analyse(&Case { f_clk: c.f_clk / k, ..c });
        prop_assert!(not_lower(the_sync(&a), the_sync(&b)), "{:?} /{}: {:?} -> {:?}", c, k, the_sync(&a).estimate, the_sync(&b).estimate);
    }

    #[test]
    fn a_lower_transition_rate_never_lowers_the_mtbf(c in case(), k in 1.01f64..1e3) {
        let a = analyse(&c);
        let b = analyse(&Case { a: c.a / k, ..c });
        prop_assert!(not_lower(the_sync(&a), the_sync(&b)), "{:?} /{}: {:?} -> {:?}", c, k, the_sync(&a).estimate, the_sync(&b).estimate);
    }

    #[test]
    fn no_slack_exactly_when_the_period_leaves_none(c in case()) {
        let a = analyse(&c);
        let s = the_sync(&a);
        let slack_ps = 1e12 / c.f_clk - c.setup_ps - c.cq_ps;
        let low: Vec<_> = a.findings.iter().filter(|f| f.rule == "low-mtbf").collect();
        if slack_ps <= 0.0 {
            prop_assert!(matches!(s.estimate, SyncEstimate::NoSettlingSlack { .. }), "{:?}", s.estimate);
            prop_assert_eq!(low.len(), 1);
            prop_assert!(low[0].message.contains("no settling slack"), "{}", low[0].message);
        } else {
            prop_assert!(matches!(s.estimate, SyncEstimate::Figure { .. }), "{:?}", s.estimate);
            prop_assert!(low.iter().all(|f| !f.message.contains("no settling slack")));
        }
    }

    #[test]
    fn figures_are_finite_and_print_bounded(c in case(), tiny_tau in 0.001f64..0.01) {
        // τ of a thousandth of a picosecond makes e^(t_r/τ) astronomically large
        let c = Case { tau_ps: tiny_tau, f_clk: c.f_clk.min(1e9), setup_ps: 0.0, cq_ps: 0.0, ..c };
        let a = analyse(&c);
        let s = the_sync(&a);
        match s.estimate {
            SyncEstimate::Figure { per_bit_log10_s, log10_s, fleet_log10_s } => {
                prop_assert!(per_bit_log10_s.is_finite() && log10_s.is_finite() && fleet_log10_s.is_finite());
                prop_assert_eq!(format_years(log10_s), "> 1e300 years");
            }
            ref other => prop_assert!(false, "{:?}", other),
        }
        let total = a.mtbf.design_log10_s.expect("a design total");
        prop_assert!(total.is_finite());
        for f in &a.findings {
            prop_assert!(!f.message.contains("inf") && !f.message.contains("NaN"), "{}", f.message);
        }
    }
}
