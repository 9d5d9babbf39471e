//! The design layer: module index, elaboration per instance, clocks and domains.
//!
//! `analyze` elaborates every top into a flat netlist, traces each register's clock to a
//! root, gives every signal its set of data domains, and hands the result to the CDC rules.

pub mod clocks;
pub mod eval;
pub mod graph;
pub mod netlist;
pub mod packages;

use std::cell::RefCell;
use std::collections::{BTreeSet, HashMap};

use crate::config::{Config, UnconstrainedInputs};
use crate::finding::{self, Finding, Severity};
use crate::model::{Edge, FileModel};
use crate::report::{Analysis, ClockInfo, RegisterInfo, SignalInfo, SignalKind};
use clocks::ClockTrace;
use graph::{Driver, Graph};
use netlist::{ModuleIndex, Netlist, SigId};

/// A register's clock, as traced.
#[derive(Clone, Debug)]
pub struct RegClock {
    pub root: Option<String>,
    pub domain: Option<String>,
    pub edge: Edge,
    pub trace: ClockTrace,
}

/// Everything the rules need: the netlist, its graph, the config, and cached views.
pub struct Ctx<'a> {
    pub n: &'a Netlist,
    pub g: Graph<'a>,
    pub config: &'a Config,
    pub files: &'a [FileModel],
    pub reg_clock: HashMap<SigId, RegClock>,
    /// Every signal that lies on a clock path.
    pub clock_nets: BTreeSet<SigId>,
    leaves: RefCell<HashMap<SigId, std::rc::Rc<BTreeSet<SigId>>>>,
}

/// Domain name used for an asynchronous top-level input.
pub fn async_domain(port: &str) -> String {
    format!("async({port})")
}

impl<'a> Ctx<'a> {
    pub fn new(n: &'a Netlist, config: &'a Config, files: &'a [FileModel]) -> Self {
        let g = Graph::new(n);
        let mut c = Ctx {
            n,
            g,
            config,
            files,
            reg_clock: HashMap::new(),
            clock_nets: BTreeSet::new(),
            leaves: Default::default(),
        };
        let mut regs: Vec<(SigId, usize)> = c.g.reg_proc.iter().map(|(s, p)| (*s, *p)).collect();
        regs.sort();
        let mut per_proc: HashMap<usize, RegClock> = HashMap::new();
        for (s, pi) in regs {
            let rc = per_proc
                .entry(pi)
                .or_insert_with(|| {
                    let (e, edge) = c.n.procs[pi].clock.clone().expect("clocked");
                    let trace = c.trace_clock(&e);
                    let root = trace.roots.iter().next().cloned();
                    let domain = root
                        .as_ref()
                        .map(|r| c.config.domain_of_clock(r).to_string());
                    let edge = if trace.inverted {
                        match edge {
                            Edge::Posedge => Edge::Negedge,
                            Edge::Negedge => Edge::Posedge,
                            e => e,
                        }
                    } else {
                        edge
                    };
                    RegClock {
                        root,
                        domain,
                        edge,
                        trace,
                    }
                })
                .clone();
            c.clock_nets.extend(rc.trace.nets.iter().copied());
            c.reg_clock.insert(s, rc);
        }
        c
    }

    pub fn domain_of_reg(&self, s: SigId) -> Option<&str> {
        self.reg_clock.get(&s).and_then(|c| c.domain.as_deref())
    }

    /// Domain of a leaf (register or top input), `None` when unknown or unchecked.
    pub fn leaf_domain(&self, s: SigId) -> Option<String> {
        if self.g.is_reg(s) {
            return self.domain_of_reg(s).map(|d| d.to_string());
        }
        if self.n.top_inputs.contains(&s) {
            let port = &self.n.sigs[s].local;
            if self.clock_nets.contains(&s) {
                return None; // a clock; used as data it is `clock-as-data`
            }
            return match self.config.inputs.get(port.as_str()) {
                Some(v) if v == "async" => Some(async_domain(port)),
                Some(clk) => Some(self.config.domain_of_clock(clk).to_string()),
                None => match self.config.design.unconstrained_inputs {
                    UnconstrainedInputs::Async => Some(async_domain(port)),
                    _ => None,
                },
            };
        }
        None
    }

    /// Registers and top inputs that feed `s` through combinational logic (s itself if it is one).
    pub fn leaves(&self, s: SigId) -> std::rc::Rc<BTreeSet<SigId>> {
        self.leaves_at(s, 0)
    }

    /// `depth` bounds the recursion (long combinational paths in big designs).
    fn leaves_at(&self, s: SigId, depth: u32) -> std::rc::Rc<BTreeSet<SigId>> {
        if let Some(l) = self.leaves.borrow().get(&s) {
            return l.clone();
        }
        if depth > 2_000 {
            return Default::default();
        }
        // mark in progress (combinational loops end here)
        self.leaves.borrow_mut().insert(s, Default::default());
        let mut out = BTreeSet::new();
        if self.g.is_reg(s) || self.n.top_inputs.contains(&s) {
            out.insert(s);
        } else if let Some(ds) = self.g.drivers.get(&s) {
            for d in ds.clone() {
                let exprs: Vec<&crate::model::Expr> = match d {
                    Driver::Comb(ci) => vec![&self.n.combs[ci].rhs],
                    Driver::CombProc(pi, ai) => {
                        let a = &self.n.procs[pi].assigns[ai];
                        let mut v = vec![&a.rhs];
                        v.extend(a.guards.iter().map(|g| &g.cond));
                        v
                    }
                };
                for e in exprs {
                    for id in e.idents() {
                        if let Some(r) = self.g.sig(id) {
                            if r != s {
                                out.extend(self.leaves_at(r, depth + 1).iter().copied());
                            }
                        }
                    }
                }
            }
        }
        let rc = std::rc::Rc::new(out);
        self.leaves.borrow_mut().insert(s, rc.clone());
        rc
    }

    /// Data domains of a signal: the domains of its leaves.
    pub fn domains(&self, s: SigId) -> BTreeSet<String> {
        self.leaves(s)
            .iter()
            .filter_map(|l| self.leaf_domain(*l))
            .collect()
    }

    pub fn is_static(&self, s: SigId) -> bool {
        let sig = &self.n.sigs[s];
        let rel = sig
            .name
            .split_once('.')
            .map(|(_, r)| r)
            .unwrap_or(&sig.name);
        self.config
            .static_signals
            .iter()
            .any(|p| p == rel || p == &sig.name)
    }

    /// `top.u_a.sig` → the span and file of the signal's declaration.
    pub fn sig_span(&self, s: SigId) -> crate::model::Span {
        self.n.sigs[s].span.clone()
    }
}

/// Analyse a whole design: every file's model (in compile order) and the project config.
///
/// Runs on a thread with a large stack (deep combinational paths and hierarchies recurse)
/// and turns an internal failure into a finding instead of a crash.
pub fn analyze(models: &[FileModel], config: &Config) -> Analysis {
    let result = std::thread::scope(|s| {
        std::thread::Builder::new()
            .stack_size(1 << 30)
            .spawn_scoped(s, || {
                std::panic::catch_unwind(std::panic::AssertUnwindSafe(|| {
                    analyze_here(models, config)
                }))
            })
            .map(|h| h.join())
    });
    match result {
        Ok(Ok(Ok(a))) => a,
        _ => {
            let mut a = Analysis {
                files: models.len(),
                modules: models.iter().map(|m| m.modules.len()).sum(),
                ..Analysis::default()
            };
            a.findings = models.iter().flat_map(finding::syntax_findings).collect();
            let span = models
                .first()
                .map(|m| crate::model::Span {
                    file: m.path.clone(),
                    line: 1,
                    column: 1,
                    end_line: 1,
                    end_column: 1,
                    ..Default::default()
                })
                .unwrap_or_default();
            a.findings.push(Finding::new(
                "syntax-error",
                Severity::Error,
                span,
                "internal error while analysing the design; CDC findings are missing (please report this design)",
            ));
            a
        }
    }
}

fn analyze_here(models: &[FileModel], config: &Config) -> Analysis {
    let mut findings: Vec<Finding> = models.iter().flat_map(finding::syntax_findings).collect();
    let index = ModuleIndex::new(models);
    let tops = index.tops(config);
    let n = netlist::elaborate(&index, config, &tops);
    let ctx = Ctx::new(&n, config, models);
    let mut out = Analysis {
        files: models.len(),
        modules: models.iter().map(|m| m.modules.len()).sum(),
        ..Analysis::default()
    };

    // unresolved modules (one hint per instance) and unconstrained inputs
    for (m, span) in &n.unresolved {
        let mut f = Finding::new(
            "unresolved-module",
            Severity::Hint,
            span.clone(),
            format!("module `{m}` has no definition and no `[cells]` entry; treated as a black box (its outputs are not traced)"),
        );
        f.signal = Some(m.clone());
        findings.push(f);
    }
    // inputs used only as async resets or sets are not data
    let mut reset_leaves: BTreeSet<SigId> = BTreeSet::new();
    for p in &n.procs {
        for (e, _) in &p.async_controls {
            if let Some(s) = ctx.g.sig(e) {
                reset_leaves.extend(ctx.leaves(s).iter().copied());
            }
        }
    }
    let data_leaves: BTreeSet<SigId> = n
        .procs
        .iter()
        .flat_map(|p| p.assigns.iter())
        .flat_map(|a| {
            a.rhs
                .idents()
                .into_iter()
                .chain(a.guards.iter().flat_map(|g| g.cond.idents()))
        })
        .filter_map(|id| ctx.g.sig(id))
        .flat_map(|s| ctx.leaves(s).iter().copied().collect::<Vec<_>>())
        .collect();
    if config.design.unconstrained_inputs == UnconstrainedInputs::Ignore {
        for &s in &n.top_inputs {
            let port = &n.sigs[s].local;
            if (reset_leaves.contains(&s) && !data_leaves.contains(&s)) || !data_leaves.contains(&s)
            {
                continue;
            }
            if ctx.clock_nets.contains(&s)
                || config.inputs.contains_key(port.as_str())
                || config.clocks.contains_key(port.as_str())
            {
                continue;
            }
            let mut f = Finding::new(
                "unconstrained-input",
                Severity::Hint,
                n.sigs[s].span.clone(),
                format!("top-level input `{port}` has no domain: its crossings are not checked (set it in `[inputs]`, e.g. `{port} = \"async\"`)"),
            );
            f.signal = Some(port.clone());
            findings.push(f);
        }
    }

    // clocks
    let mut roots: BTreeSet<String> = ctx
        .reg_clock
        .values()
        .filter_map(|c| c.root.clone())
        .collect();
    roots.extend(config.clocks.keys().cloned());
    for r in roots {
        let spec = config.clocks.get(&r);
        out.clocks.push(ClockInfo {
            name: r.clone(),
            frequency_hz: spec.and_then(|s| s.frequency_hz),
            group: spec.and_then(|s| s.group.clone()),
            root: format!("{}.{r}", tops.first().copied().unwrap_or("")),
            domain: config.domain_of_clock(&r).to_string(),
        });
    }

    let cdc = crate::cdc::run(&ctx);
    findings.extend(cdc.findings);
    out.crossings = cdc.crossings;
    out.mtbf = cdc.mtbf;

    // registers and signals tables
    let mut regs: Vec<SigId> = ctx.g.reg_proc.keys().copied().collect();
    regs.sort();
    for s in regs {
        let sig = &n.sigs[s];
        let rc = &ctx.reg_clock[&s];
        // the reset tree of this instance (cdc::resets): where the async reset comes from
        let reset_source = cdc.resets.get(&s).cloned();
        let reset = reset_source.as_ref().map(|r| r.text());
        out.registers.push(RegisterInfo {
            instance: n.insts[sig.inst].path.clone(),
            module: n.insts[sig.inst].module.clone(),
            signal: sig.local.clone(),
            span: sig.span.clone(),
            clock: rc.root.clone(),
            edge: rc.edge,
            domain: rc.domain.clone(),
            derived_from: rc.trace.derived.first().map(|d| n.sigs[*d].name.clone()),
            reset,
            stage: cdc.stages.get(&s).cloned(),
            reset_source,
        });
    }
    for (s, sig) in n.sigs.iter().enumerate() {
        if sig.span.line == 0 {
            continue;
        }
        let kind = if ctx.clock_nets.contains(&s) {
            SignalKind::Clock
        } else if ctx.g.is_reg(s) {
            SignalKind::Register
        } else if n.top_inputs.contains(&s) {
            SignalKind::Input
        } else {
            SignalKind::Combinational
        };
        let mut notes = Vec::new();
        let domains: Vec<String> = match kind {
            SignalKind::Register => ctx
                .domain_of_reg(s)
                .map(|d| vec![d.to_string()])
                .unwrap_or_default(),
            SignalKind::Clock => {
                let t = ctx.trace_clock(&crate::model::Expr::Ident {
                    name: sig.name.clone(),
                    loc: Default::default(),
                });
                if let Some(r) = t.roots.iter().next() {
                    notes.push(format!("clock root: {r}"));
                }
                if !t.derived.is_empty() {
                    notes.push("derived from a register (flop-derived clock)".into());
                }
                if !t.gates.is_empty() {
                    notes.push("gated by plain logic".into());
                }
                let clocked = ctx
                    .reg_clock
                    .values()
                    .filter(|c| c.trace.nets.contains(&s))
                    .count();
                notes.push(format!("clocks {clocked} register(s)"));
                t.roots
                    .iter()
                    .map(|r| config.domain_of_clock(r).to_string())
                    .collect()
            }
            _ => ctx.domains(s).into_iter().collect(),
        };
        if let Some(st) = cdc.stages.get(&s) {
            notes.push(format!(
                "synchronizer stage {} of {} from {}",
                st.0, st.1, st.2
            ));
        }
        if let Some(ns) = cdc.scheme_notes.get(&s) {
            notes.extend(ns.iter().cloned());
        }
        if let Some((k, of)) = cdc.reset_stages.get(&s) {
            notes.push(format!("reset synchronizer stage {k} of {of}"));
        }
        out.signals.push(SignalInfo {
            instance: n.insts[sig.inst].path.clone(),
            module: n.insts[sig.inst].module.clone(),
            name: sig.local.clone(),
            span: sig.span.clone(),
            kind,
            domains,
            notes,
        });
    }

    out.findings = crate::cdc::waivers::apply(findings, models, config);
    // a crossing whose finding is waived shows as waived in the tables and the map
    for c in out
        .crossings
        .iter_mut()
        .filter(|c| c.status == crate::report::CrossingStatus::Unsafe)
    {
        let waived = out
            .findings
            .iter()
            .any(|f| f.waived && f.span.file == c.span.file && f.span.line == c.span.line);
        if waived {
            c.status = crate::report::CrossingStatus::Waived;
        }
    }
    out
}
