//! Model extraction on fixtures covering Verilog-2001 and SystemVerilog styles, async resets,
//! always_ff/comb/latch, chains, guards, generate, several files with include and macro
//! carry-over, and constructs that must not count as processes.
//! Outside reference for "valid RTL": every fixture compiles with `iverilog -g2012` and lints
//! with `verilator --lint-only` (Debian packages).

use seam_analysis::model::*;
use seam_tests::*;

fn single(name: &str) -> FileModel {
    let f = fixtures().join("model/single").join(name);
    let mut m = parse_in_order(&[f], &[]);
    let m = m.remove(0);
    assert!(m.problems.is_empty(), "{name}: {:?}", m.problems);
    m
}

fn module<'a>(f: &'a FileModel, name: &str) -> &'a Module {
    f.modules
        .iter()
        .find(|m| m.name == name)
        .unwrap_or_else(|| panic!("no module {name}"))
}

fn name(e: &Expr) -> &str {
    e.base_name().unwrap_or("")
}

#[test]
fn fixtures_are_valid_rtl_per_iverilog_and_verilator() {
    let s = fixtures().join("model/single");
    let m = fixtures().join("model/multi");
    let inc = vec![m.join("include")];
    for f in ["tg_v2001.v", "tg_sv.sv"] {
        iverilog_compiles(&[s.join(f)], &[]).unwrap_or_else(|e| panic!("iverilog {f}: {e}"));
        verilator_lints(&[s.join(f)], &[], None).unwrap_or_else(|e| panic!("verilator {f}: {e}"));
    }
    let files = vec![m.join("a_macros.v"), m.join("b_core.v")];
    iverilog_compiles(&files, &inc).expect("iverilog multi");
    verilator_lints(&files, &inc, Some("tg_core")).expect("verilator multi");
}

#[test]
fn verilog_2001_ports_params_and_async_reset() {
    let f = single("tg_v2001.v");
    assert_eq!(f.language, Language::Verilog);
    let m = module(&f, "tg_v2001");
    let port_names: Vec<&str> = m.ports.iter().map(|p| p.name.as_str()).collect();
    assert_eq!(
        port_names,
        [
            "clk_sys",
            "rst_n",
            "adc_valid",
            "sample",
            "level",
            "level_ok"
        ]
    );
    let sample = &m.ports[3];
    assert_eq!(sample.direction, Some(Direction::Input));
    assert_eq!(render(&sample.packed[0].msb), "WIDTH - 1");
    let level = &m.ports[4];
    assert_eq!(level.direction, Some(Direction::Output));
    assert!(level.is_var, "output + reg declaration is a variable");
    let params: Vec<&str> = m.params.iter().map(|p| p.name.as_str()).collect();
    assert_eq!(params, ["WIDTH", "THRESH"]);
    assert_eq!(
        m.params[0].default.as_ref().map(render).as_deref(),
        Some("12")
    );

    let procs: Vec<&Process> = m.processes().collect();
    assert_eq!(procs.len(), 3);
    // negedge rst_n tested as !rst_n: async control, active low; clock is clk_sys
    let p0 = procs[0];
    assert_eq!(
        p0.clock.as_ref().map(|c| (c.edge, name(&c.signal))),
        Some((Edge::Posedge, "clk_sys"))
    );
    assert_eq!(p0.async_controls.len(), 1);
    assert_eq!(name(&p0.async_controls[0].signal), "rst_n");
    assert!(!p0.async_controls[0].active_high);
    let resets: Vec<&Assignment> = p0.assigns.iter().filter(|a| a.in_reset).collect();
    assert_eq!(resets.len(), 2);
    let s2 = p0
        .assigns
        .iter()
        .find(|a| name(&a.target) == "valid_s2" && !a.in_reset)
        .unwrap();
    assert_eq!(render(&s2.rhs), "valid_s1");
    assert!(
        s2.guards.is_empty(),
        "the reset test is not a guard: {:?}",
        s2.guards
    );
    assert!(!s2.blocking);
    assert_eq!(s2.span.line, 22);
    // guarded load
    let p1 = procs[1];
    assert!(p1.async_controls.is_empty());
    assert_eq!(p1.assigns[0].guards.len(), 1);
    assert_eq!(render(&p1.assigns[0].guards[0].cond), "valid_s2");
    // combinational @(*)
    assert!(procs[2].events.is_empty() && procs[2].clock.is_none());
    assert!(procs[2].assigns[0].blocking);
}

#[test]
fn wrong_polarity_reset_is_not_an_async_control() {
    // `negedge rst_n` tested as `if (rst_n)`: polarity does not match, so no async control
    let dir = tempdir_path();
    let p = dir.join("bad_pol.v");
    std::fs::write(
        &p,
        "module bad_pol(input clk, input rst_n, input d, output reg q);\n\
         always @(posedge clk or negedge rst_n) if (rst_n) q <= d; else q <= 1'b0;\nendmodule\n",
    )
    .unwrap();
    let f = parse_in_order(&[p], &[]).remove(0);
    let pr = f.modules[0].processes().next().unwrap().clone();
    assert!(pr.async_controls.is_empty());
}

#[test]
fn systemverilog_chains_gray_case_latch_generate() {
    let f = single("tg_sv.sv");
    assert_eq!(f.language, Language::SystemVerilog);
    let m = module(&f, "tg_sv");
    assert_eq!(
        m.params.iter().map(|p| p.name.as_str()).collect::<Vec<_>>(),
        ["DEPTH", "USE_AVG"]
    );
    assert_eq!(m.ports.len(), 9);
    assert!(m.ports.iter().all(|p| p.direction.is_some()));
    let procs: Vec<&Process> = m.processes().collect();
    let ff = procs[0];
    assert_eq!(ff.kind, ProcessKind::AlwaysFf);
    assert!(ff.async_controls[0].active_high);
    assert_eq!(name(&ff.async_controls[0].signal), "rst");
    // alarm_s <= {alarm_s[0], tide_alarm}: a concatenation of a bit select and the input
    let chain = ff.assigns.iter().find(|a| !a.in_reset).unwrap();
    let Expr::Concat { parts } = &chain.rhs else {
        panic!("{:?}", chain.rhs)
    };
    assert!(matches!(&parts[0], Expr::Select { sel, .. } if matches!(**sel, Select::Bit { .. })));
    assert_eq!(name(&parts[0]), "alarm_s");
    assert_eq!(name(&parts[1]), "tide_alarm");
    // gray <= bin ^ (bin >> 1) and counter bin <= bin + 1
    let cnt = procs[1];
    let gray = cnt
        .assigns
        .iter()
        .find(|a| name(&a.target) == "gray")
        .unwrap();
    assert!(matches!(&gray.rhs, Expr::Binary { op, .. } if op == "^"));
    let bin = cnt
        .assigns
        .iter()
        .find(|a| name(&a.target) == "bin")
        .unwrap();
    assert_eq!(render(&bin.rhs), "bin + 1'b1");
    // case guards
    let comb = procs[2];
    assert_eq!(comb.kind, ProcessKind::AlwaysComb);
    let m1 = comb
        .assigns
        .iter()
        .find(|a| render(&a.rhs) == "2'd1")
        .unwrap();
    assert_eq!(render(&m1.guards[0].cond), "code[1:0] == 2'b01");
    let m2 = comb
        .assigns
        .iter()
        .find(|a| render(&a.rhs) == "2'd2")
        .unwrap();
    assert!(render(&m2.guards[0].cond).contains("||"));
    let latch = procs[3];
    assert_eq!(latch.kind, ProcessKind::AlwaysLatch);
    assert_eq!(render(&latch.assigns[0].guards[0].cond), "en");
    // generate for and if stay symbolic
    let gfor = m
        .items
        .iter()
        .find_map(|i| match &i.kind {
            ItemKind::GenerateFor(g) => Some(g),
            _ => None,
        })
        .unwrap();
    assert_eq!(gfor.genvar, "i");
    assert_eq!(render(&gfor.cond), "i < DEPTH");
    assert_eq!(render(&gfor.step), "i + 1");
    assert_eq!(gfor.label.as_deref(), Some("g_tap"));
    assert!(gfor
        .items
        .iter()
        .any(|i| matches!(i.kind, ItemKind::Process(_))));
    let gif = m
        .items
        .iter()
        .find_map(|i| match &i.kind {
            ItemKind::GenerateIf(g) => Some(g),
            _ => None,
        })
        .unwrap();
    assert_eq!(gif.branches.len(), 2);
    assert_eq!(
        gif.labels,
        vec![Some("g_avg".to_string()), Some("g_noavg".to_string())]
    );
    // memories
    let taps = m
        .all_items()
        .into_iter()
        .find_map(|i| match &i.kind {
            ItemKind::Decl(d) if d.name == "taps" => Some(d),
            _ => None,
        })
        .unwrap();
    assert_eq!(taps.unpacked.len(), 1);
    // initial and SVA are not processes; SYNTHESIS is defined so the `ifndef block is gone
    let ignored: Vec<&str> = m
        .items
        .iter()
        .filter_map(|i| match &i.kind {
            ItemKind::Ignored { what } => Some(what.as_str()),
            _ => None,
        })
        .collect();
    assert_eq!(
        ignored.iter().filter(|w| **w == "initial").count(),
        1,
        "{ignored:?}"
    );
    assert!(ignored.contains(&"assertion"), "{ignored:?}");
    // 4 top-level processes + the ones inside generate
    assert_eq!(procs.len(), 6);
}

#[test]
fn multi_file_include_and_macro_carry_over() {
    let d = fixtures().join("model/multi");
    let files = vec![d.join("a_macros.v"), d.join("b_core.v")];
    let models = parse_in_order(&files, &[d.join("include")]);
    for m in &models {
        assert!(m.problems.is_empty(), "{}: {:?}", m.path, m.problems);
    }
    let core = module(&models[1], "tg_core");
    assert!(
        models[1]
            .includes
            .iter()
            .any(|i| i.ends_with("tg_widths.vh")),
        "{:?}",
        models[1].includes
    );
    // `TG_LEVEL_W expanded to 12
    let level = core.ports.iter().find(|p| p.name == "level").unwrap();
    assert_eq!(render(&level.packed[0].msb), "12 - 1");
    // the `TG_FLOP macro (from the earlier file) made a process clocked by clk_sys,
    // and its span maps back to the macro use on line 13
    let from_macro = core
        .processes()
        .find(|p| p.assigns.iter().any(|a| name(&a.target) == "tick_q"))
        .unwrap();
    assert_eq!(name(&from_macro.clock.as_ref().unwrap().signal), "clk_sys");
    assert_eq!(from_macro.span.line, 13);
    let insts: Vec<&Instance> = core.instances().collect();
    assert_eq!(insts.len(), 3);
    assert_eq!(insts[0].name, "u_ord");
    assert!(insts[0].connections.iter().all(|c| c.port.is_none()));
    assert_eq!(insts[0].connections.len(), 3);
    assert_eq!(insts[1].connections[1].port.as_deref(), Some("d"));
    assert_eq!(
        insts[1].connections[1].expr.as_ref().map(render).as_deref(),
        Some("s1")
    );
    assert!(insts[2].wildcard);
    // without the earlier file the macro is undefined: a located error at its use
    let alone = parse_in_order(&files[1..], &[d.join("include")]);
    let p = &alone[0].problems[0];
    assert!(p.message.contains("TG_FLOP"), "{}", p.message);
    assert_eq!((p.span.line, p.span.column), (13, 3));
}

#[test]
fn model_serializes_to_json_and_back() {
    let f = single("tg_sv.sv");
    let s = serde_json::to_string(&f).unwrap();
    let back: FileModel = serde_json::from_str(&s).unwrap();
    assert_eq!(back, f);
}

pub fn tempdir_path() -> std::path::PathBuf {
    let d = std::env::temp_dir().join(format!(
        "seam-model-{}-{}",
        std::process::id(),
        rand_suffix()
    ));
    std::fs::create_dir_all(&d).unwrap();
    d
}

fn rand_suffix() -> u128 {
    std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .unwrap()
        .as_nanos()
}
