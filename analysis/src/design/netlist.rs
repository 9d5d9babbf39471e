//! Elaboration: the instance tree, parameters per instance, generate unrolled where the bounds
//! are constant, and every name resolved to a flat hierarchical signal. The result is a flat
//! netlist of signals, clocked processes, combinational assignments and port connections.

use std::collections::{HashMap, HashSet};

use super::eval::{self, Env};
use super::packages::PackageConsts;
use crate::config::{Cell, Config};
use crate::model::*;

pub type SigId = usize;

#[derive(Clone, Debug)]
pub struct Sig {
    pub name: String,
    pub local: String,
    pub inst: usize,
    pub width: Option<u32>,
    pub lsb: i64,
    pub memory: bool,
    pub port: Option<Direction>,
    pub span: Span,
}

#[derive(Clone, Debug)]
pub struct Inst {
    pub path: String,
    pub module: String,
    pub parent: Option<usize>,
    /// (file index, module index) of the definition.
    pub def: Option<(usize, usize)>,
    pub cell: Option<Cell>,
    pub trusted: bool,
    pub span: Span,
}

#[derive(Clone, Debug)]
pub struct FAssign {
    pub target: Expr,
    pub rhs: Expr,
    pub guards: Vec<Guard>,
    pub in_reset: bool,
    pub span: Span,
}

#[derive(Clone, Debug)]
pub struct Proc {
    pub inst: usize,
    pub clock: Option<(Expr, Edge)>,
    pub async_controls: Vec<(Expr, bool)>,
    pub assigns: Vec<FAssign>,
    pub span: Span,
    pub file: usize,
}

#[derive(Clone, Debug)]
pub struct Comb {
    pub inst: usize,
    pub target: Expr,
    pub rhs: Expr,
    pub span: Span,
    /// A port connection (child port ↔ parent expression) rather than an `assign`.
    pub port: bool,
}

/// A variable of an elaborated function: its frame key (`%name`), width and numbering.
#[derive(Clone, Debug)]
pub struct FVar {
    pub key: String,
    pub width: u32,
    pub lsb: i64,
    pub signed: bool,
}

/// A function elaborated in one scope: widths evaluated, parameters folded, names of
/// arguments and locals marked `%name`, other names resolved to signals.
#[derive(Clone, Debug)]
pub struct FFunc {
    pub ret: FVar,
    pub args: Vec<FVar>,
    pub locals: Vec<FVar>,
    pub body: Vec<Stmt>,
}

#[derive(Default, Debug)]
pub struct Netlist {
    pub insts: Vec<Inst>,
    pub sigs: Vec<Sig>,
    pub by_name: HashMap<String, SigId>,
    pub procs: Vec<Proc>,
    pub combs: Vec<Comb>,
    /// Top-level input ports.
    pub top_inputs: Vec<SigId>,
    /// Connections to instances of undefined modules: (instance, port name, parent signal).
    pub blackbox_pins: Vec<(usize, String, SigId)>,
    pub unresolved: Vec<(String, Span)>,
    /// Functions by their scoped name (`top.u.g.name`); resolved calls carry that name.
    pub funcs: HashMap<String, FFunc>,
}

pub struct ModuleIndex<'m> {
    pub files: &'m [FileModel],
    pub by_name: HashMap<&'m str, (usize, usize)>,
    pub packages: PackageConsts,
}

impl<'m> ModuleIndex<'m> {
    pub fn new(files: &'m [FileModel]) -> Self {
        let mut by_name = HashMap::new();
        for (fi, f) in files.iter().enumerate() {
            for (mi, m) in f.modules.iter().enumerate() {
                by_name.entry(m.name.as_str()).or_insert((fi, mi));
            }
        }
        ModuleIndex {
            files,
            by_name,
            packages: PackageConsts::new(files),
        }
    }

    pub fn get(&self, name: &str) -> Option<&'m Module> {
        self.by_name
            .get(name)
            .map(|(f, m)| &self.files[*f].modules[*m])
    }

    /// `[design] top`, else modules never instantiated that are not testbenches.
    pub fn tops(&self, config: &Config) -> Vec<&'m str> {
        if !config.design.top.is_empty() {
            return config
                .design
                .top
                .iter()
                .filter_map(|t| self.by_name.get_key_value(t.as_str()).map(|(k, _)| *k))
                .collect();
        }
        let mut used: HashSet<&str> = HashSet::new();
        for f in self.files {
            for m in &f.modules {
                for i in m.instances() {
                    used.insert(i.module.as_str());
                }
            }
        }
        let mut tops: Vec<&str> = Vec::new();
        for f in self.files {
            for m in &f.modules {
                if m.kind == ModuleKind::Module
                    && !used.contains(m.name.as_str())
                    && !m.is_testbench()
                {
                    tops.push(m.name.as_str());
                }
            }
        }
        tops
    }
}

const MAX_INSTANCES: usize = 200_000;
const MAX_GEN_ITER: i64 = 4096;

struct Scope {
    /// Prefixes from innermost to outermost, e.g. ["top.u.g[1].", "top.u."].
    prefixes: Vec<String>,
    env: Env,
}

pub fn elaborate(index: &ModuleIndex, config: &Config, tops: &[&str]) -> Netlist {
    let mut n = Netlist::default();
    for t in tops {
        let Some(&(fi, mi)) = index.by_name.get(t) else {
            continue;
        };
        let m = &index.files[fi].modules[mi];
        let inst = n.insts.len();
        n.insts.push(Inst {
            path: t.to_string(),
            module: t.to_string(),
            parent: None,
            def: Some((fi, mi)),
            cell: None,
            trusted: false,
            span: m.name_span.clone(),
        });
        let env = params_env(index, m, &[], &Env::new());
        elab_module(index, config, &mut n, inst, m, fi, env, 0);
        for p in &m.ports {
            if matches!(p.direction, Some(Direction::Input) | Some(Direction::Inout)) {
                if let Some(&s) = n.by_name.get(&format!("{t}.{}", p.name)) {
                    n.top_inputs.push(s);
                }
            }
        }
    }
    n
}

/// Parameter values of an instance: defaults, overridden by the instance's assignments, over
/// the package constants the module sees.
fn params_env(index: &ModuleIndex, m: &Module, overrides: &[Connection], parent_env: &Env) -> Env {
    let mut env = index.packages.base_env(m);
    let overridable: Vec<&Param> = m.params.iter().filter(|p| !p.local).collect();
    let mut given: HashMap<String, i64> = HashMap::new();
    for (i, c) in overrides.iter().enumerate() {
        let name = match &c.port {
            Some(n) => Some(n.clone()),
            None => overridable.get(i).map(|p| p.name.clone()),
        };
        if let (Some(name), Some(e)) = (name, &c.expr) {
            if let Some(v) = eval::eval(e, parent_env) {
                given.insert(name, v);
            }
        }
    }
    for p in &m.params {
        if let Some(v) = given.get(&p.name).filter(|_| !p.local) {
            env.insert(p.name.clone(), *v);
        } else if let Some(v) = p.default.as_ref().and_then(|d| eval::eval(d, &env)) {
            env.insert(p.name.clone(), v);
        }
    }
    env
}

#[allow(clippy::too_many_arguments)]
fn elab_module(
    index: &ModuleIndex,
    config: &Config,
    n: &mut Netlist,
    inst: usize,
    m: &Module,
    file: usize,
    env: Env,
    depth: usize,
) {
    if depth > 64 || n.insts.len() > MAX_INSTANCES {
        return;
    }
    let path = n.insts[inst].path.clone();
    let mut scope = Scope {
        prefixes: vec![format!("{path}.")],
        env,
    };
    // ports first (ANSI and merged non-ANSI), then body declarations
    for p in &m.ports {
        let w = if p.type_name.is_some() && p.packed.is_empty() {
            None
        } else {
            eval::width(&p.packed, &scope.env)
        };
        add_sig(
            n,
            inst,
            &format!("{path}.{}", p.name),
            &p.name,
            w,
            eval::lsb(&p.packed, &scope.env),
            !p.unpacked.is_empty(),
            p.direction,
            &p.span,
        );
    }
    declare(n, inst, &m.items, &mut scope);
    flatten_items(index, config, n, inst, &m.items, &mut scope, file, depth);
}

#[allow(clippy::too_many_arguments)]
fn add_sig(
    n: &mut Netlist,
    inst: usize,
    name: &str,
    local: &str,
    width: Option<u32>,
    lsb: i64,
    memory: bool,
    port: Option<Direction>,
    span: &Span,
) -> SigId {
    if let Some(&s) = n.by_name.get(name) {
        let sig = &mut n.sigs[s];
        if sig.width.is_none() {
            sig.width = width;
        }
        sig.memory |= memory;
        return s;
    }
    let id = n.sigs.len();
    n.sigs.push(Sig {
        name: name.to_string(),
        local: local.to_string(),
        inst,
        width,
        lsb,
        memory,
        port,
        span: span.clone(),
    });
    n.by_name.insert(name.to_string(), id);
    id
}

/// Unroll a generate-for under `scope`, calling `f` for each iteration's scope.
fn unroll(g: &GenerateFor, scope: &Scope, mut f: impl FnMut(Scope)) {
    let Some(mut v) = eval::eval(&g.init, &scope.env) else {
        return;
    };
    let mut iters = 0;
    loop {
        let mut env = scope.env.clone();
        env.insert(g.genvar.clone(), v);
        if eval::eval(&g.cond, &env) != Some(1) {
            break;
        }
        iters += 1;
        if iters > MAX_GEN_ITER {
            break;
        }
        let label = g.label.clone().unwrap_or_else(|| "genblk".into());
        let mut prefixes = vec![format!("{}{label}[{v}].", scope.prefixes[0])];
        prefixes.extend(scope.prefixes.iter().cloned());
        f(Scope {
            prefixes,
            env: env.clone(),
        });
        match eval::eval(&g.step, &env) {
            Some(nv) if nv != v => v = nv,
            _ => break,
        }
    }
}

/// The branch of a generate-if chosen under `scope`, with its label.
fn choose<'a>(g: &'a GenerateIf, scope: &Scope) -> Option<(&'a [Item], Option<String>)> {
    for (i, (cond, items)) in g.branches.iter().enumerate() {
        let take = match cond {
            None => true,
            Some(c) => eval::eval(c, &scope.env).map(|v| v != 0)?,
        };
        if take {
            return Some((items.as_slice(), g.labels.get(i).cloned().flatten()));
        }
    }
    None
}

fn sub_scope(scope: &Scope, label: Option<String>) -> Scope {
    match label {
        Some(l) => {
            let mut prefixes = vec![format!("{}{l}.", scope.prefixes[0])];
            prefixes.extend(scope.prefixes.iter().cloned());
            Scope {
                prefixes,
                env: scope.env.clone(),
            }
        }
        None => Scope {
            prefixes: scope.prefixes.clone(),
            env: scope.env.clone(),
        },
    }
}

fn declare(n: &mut Netlist, inst: usize, items: &[Item], scope: &mut Scope) {
    for it in items {
        match &it.kind {
            ItemKind::Decl(d) if d.kind != DeclKind::Genvar => {
                let w = if d.type_name.is_some() && d.packed.is_empty() {
                    None
                } else {
                    eval::width(&d.packed, &scope.env)
                };
                let name = format!("{}{}", scope.prefixes[0], d.name);
                add_sig(
                    n,
                    inst,
                    &name,
                    &d.name,
                    w,
                    eval::lsb(&d.packed, &scope.env),
                    !d.unpacked.is_empty(),
                    None,
                    &d.span,
                );
            }
            ItemKind::Param(p) => {
                if !scope.env.contains_key(&p.name) {
                    if let Some(v) = p.default.as_ref().and_then(|e| eval::eval(e, &scope.env)) {
                        scope.env.insert(p.name.clone(), v);
                    }
                }
            }
            ItemKind::Function(f) => declare_function(n, inst, f, scope),
            ItemKind::GenerateFor(g) => {
                unroll(g, scope, |mut s| declare(n, inst, &g.items, &mut s))
            }
            ItemKind::GenerateIf(g) => {
                if let Some((items, label)) = choose(g, scope) {
                    let mut s = sub_scope(scope, label);
                    declare(n, inst, items, &mut s);
                }
            }
            _ => {}
        }
    }
}

/// Elaborate a function under `scope`; one whose types are not all plain vectors or integer
/// atoms, or that has outputs, is left out (its calls stay opaque).
fn declare_function(n: &mut Netlist, inst: usize, f: &Function, scope: &Scope) {
    if f.has_outputs {
        return;
    }
    let var = |v: &FuncVar| -> Option<FVar> {
        if v.other_type {
            return None;
        }
        let (width, lsb) = match v.atom {
            Some(w) if v.packed.is_empty() => (w, 0),
            Some(_) => return None,
            None => (
                eval::width(&v.packed, &scope.env)?,
                eval::lsb(&v.packed, &scope.env),
            ),
        };
        (width <= 64).then(|| FVar {
            key: format!("%{}", v.name),
            width,
            lsb,
            // integer atoms are signed (IEEE 1800-2017 6.11; `time`, rare here, is not)
            signed: v.atom.is_some(),
        })
    };
    let (Some(ret), Some(args), Some(locals)) = (
        var(&f.ret),
        f.args.iter().map(var).collect::<Option<Vec<_>>>(),
        f.locals.iter().map(var).collect::<Option<Vec<_>>>(),
    ) else {
        return;
    };
    let names: HashSet<&str> = std::iter::once(f.name.as_str())
        .chain(f.args.iter().map(|v| v.name.as_str()))
        .chain(f.locals.iter().map(|v| v.name.as_str()))
        .collect();
    let body = f
        .body
        .iter()
        .map(|s| resolve_stmt(n, inst, s, scope, &names))
        .collect();
    let key = format!("{}{}", scope.prefixes[0], f.name);
    n.funcs.insert(
        key,
        FFunc {
            ret,
            args,
            locals,
            body,
        },
    );
}

fn resolve_stmt(
    n: &mut Netlist,
    inst: usize,
    s: &Stmt,
    scope: &Scope,
    names: &HashSet<&str>,
) -> Stmt {
    let ex = |e: &Expr, n: &mut Netlist| {
        let mut e = e.clone();
        mark_locals(&mut e, names);
        resolve_in_place(n, inst, &mut e, scope, &[], false);
        e
    };
    let all = |v: &[Stmt], n: &mut Netlist| -> Vec<Stmt> {
        v.iter()
            .map(|s| resolve_stmt(n, inst, s, scope, names))
            .collect()
    };
    match s {
        Stmt::Assign { target, rhs } => Stmt::Assign {
            target: ex(target, n),
            rhs: ex(rhs, n),
        },
        Stmt::If { cond, then, other } => Stmt::If {
            cond: ex(cond, n),
            then: all(then, n),
            other: all(other, n),
        },
        Stmt::Case {
            sel,
            items,
            default,
        } => Stmt::Case {
            sel: ex(sel, n),
            items: items
                .iter()
                .map(|(ls, b)| (ls.iter().map(|l| ex(l, n)).collect(), all(b, n)))
                .collect(),
            default: all(default, n),
        },
        Stmt::For {
            init,
            cond,
            step,
            body,
        } => Stmt::For {
            init: all(init, n),
            cond: ex(cond, n),
            step: all(step, n),
            body: all(body, n),
        },
        Stmt::Return { value } => Stmt::Return {
            value: value.as_ref().map(|v| ex(v, n)),
        },
        Stmt::Unsupported { what } => Stmt::Unsupported { what: what.clone() },
    }
}

/// Names of a function's own variables become `%name` (frame keys, never signals).
fn mark_locals(e: &mut Expr, names: &HashSet<&str>) {
    match e {
        Expr::Ident { name, .. } if names.contains(name.as_str()) => *name = format!("%{name}"),
        Expr::Ident { .. } | Expr::Const { .. } => {}
        Expr::Select { base, sel } => {
            mark_locals(base, names);
            match sel.as_mut() {
                Select::Bit { index } => mark_locals(index, names),
                Select::Part { msb, lsb } => {
                    mark_locals(msb, names);
                    mark_locals(lsb, names);
                }
                Select::Up { base, width } | Select::Down { base, width } => {
                    mark_locals(base, names);
                    mark_locals(width, names);
                }
            }
        }
        Expr::Unary { arg, .. } => mark_locals(arg, names),
        Expr::Binary { lhs, rhs, .. } => {
            mark_locals(lhs, names);
            mark_locals(rhs, names);
        }
        Expr::Ternary { cond, then, other } => {
            mark_locals(cond, names);
            mark_locals(then, names);
            mark_locals(other, names);
        }
        Expr::Concat { parts } => parts.iter_mut().for_each(|p| mark_locals(p, names)),
        Expr::Repl { count, parts } => {
            mark_locals(count, names);
            parts.iter_mut().for_each(|p| mark_locals(p, names));
        }
        Expr::Call { args, .. } => args.iter_mut().for_each(|p| mark_locals(p, names)),
        Expr::Opaque { reads, .. } => reads.iter_mut().for_each(|p| mark_locals(p, names)),
    }
}

/// Resolve names in an expression to flat signal names; parameters become constants.
fn resolve(
    n: &mut Netlist,
    inst: usize,
    e: &Expr,
    scope: &Scope,
    locals: &[String],
    implicit: bool,
) -> Expr {
    let mut out = e.clone();
    resolve_in_place(n, inst, &mut out, scope, locals, implicit);
    out
}

fn resolve_in_place(
    n: &mut Netlist,
    inst: usize,
    e: &mut Expr,
    scope: &Scope,
    locals: &[String],
    implicit: bool,
) {
    match e {
        Expr::Ident { name, .. } if name.starts_with('%') => {} // a function's own variable
        Expr::Ident { name, loc } => {
            if let Some(v) = scope.env.get(name.as_str()) {
                let t = v.to_string();
                *e = Expr::Const {
                    text: t,
                    value: u64::try_from(*v).ok(),
                    width: None,
                };
                return;
            }
            if locals.contains(name) {
                // block-local variable: keep it local to the process (not a design signal)
                *name = format!("{}{}", scope.prefixes[0], name);
                return;
            }
            for p in &scope.prefixes {
                let full = format!("{p}{name}");
                if n.by_name.contains_key(&full) {
                    *name = full;
                    return;
                }
            }
            if name.contains("::") {
                return; // package constant we could not evaluate: not a signal
            }
            if implicit && !name.contains('.') {
                let full = format!(
                    "{}{name}",
                    scope.prefixes.last().cloned().unwrap_or_default()
                );
                let span = Span {
                    line: 0,
                    ..Default::default()
                };
                add_sig(n, inst, &full, name, Some(1), 0, false, None, &span);
                let _ = loc;
                *name = full;
            } else {
                // hierarchical reference or unknown: keep it path-qualified
                *name = format!(
                    "{}{name}",
                    scope.prefixes.last().cloned().unwrap_or_default()
                );
            }
        }
        Expr::Select { base, sel } => {
            resolve_in_place(n, inst, base, scope, locals, implicit);
            match sel.as_mut() {
                Select::Bit { index } => resolve_in_place(n, inst, index, scope, locals, false),
                Select::Part { msb, lsb } => {
                    resolve_in_place(n, inst, msb, scope, locals, false);
                    resolve_in_place(n, inst, lsb, scope, locals, false);
                }
                Select::Up { base, width } | Select::Down { base, width } => {
                    resolve_in_place(n, inst, base, scope, locals, false);
                    resolve_in_place(n, inst, width, scope, locals, false);
                }
            }
        }
        Expr::Const { .. } => {}
        Expr::Unary { arg, .. } => resolve_in_place(n, inst, arg, scope, locals, false),
        Expr::Binary { lhs, rhs, .. } => {
            resolve_in_place(n, inst, lhs, scope, locals, false);
            resolve_in_place(n, inst, rhs, scope, locals, false);
        }
        Expr::Ternary { cond, then, other } => {
            resolve_in_place(n, inst, cond, scope, locals, false);
            resolve_in_place(n, inst, then, scope, locals, false);
            resolve_in_place(n, inst, other, scope, locals, false);
        }
        Expr::Concat { parts } => parts
            .iter_mut()
            .for_each(|p| resolve_in_place(n, inst, p, scope, locals, implicit)),
        Expr::Repl { count, parts } => {
            resolve_in_place(n, inst, count, scope, locals, false);
            parts
                .iter_mut()
                .for_each(|p| resolve_in_place(n, inst, p, scope, locals, false));
        }
        Expr::Call { name, args } => {
            args.iter_mut()
                .for_each(|p| resolve_in_place(n, inst, p, scope, locals, false));
            // a cast to a parameter width, `W'(x)` or `(W-1)'(x)`, gets the number
            if let Some(t) = name.strip_suffix('\'') {
                if t.parse::<u32>().is_err() {
                    if let Some(w) = eval::eval(&parse_expr(t), &scope.env) {
                        *name = format!("{w}'");
                    }
                }
            }
            // a function of this scope (innermost first): the call carries its scoped name
            if let Some(key) = scope
                .prefixes
                .iter()
                .map(|p| format!("{p}{name}"))
                .find(|k| n.funcs.contains_key(k))
            {
                *name = key;
            }
        }
        Expr::Opaque { reads, .. } => reads
            .iter_mut()
            .for_each(|p| resolve_in_place(n, inst, p, scope, locals, false)),
    }
}

#[allow(clippy::too_many_arguments)]
fn flatten_items(
    index: &ModuleIndex,
    config: &Config,
    n: &mut Netlist,
    inst: usize,
    items: &[Item],
    scope: &mut Scope,
    file: usize,
    depth: usize,
) {
    for it in items {
        match &it.kind {
            ItemKind::Decl(d) => {
                if let (Some(init), DeclKind::Net) = (&d.init, d.kind) {
                    let target = resolve(
                        n,
                        inst,
                        &Expr::Ident {
                            name: d.name.clone(),
                            loc: Loc::default(),
                        },
                        scope,
                        &[],
                        true,
                    );
                    let rhs = resolve(n, inst, init, scope, &[], false);
                    n.combs.push(Comb {
                        inst,
                        target,
                        rhs,
                        span: d.span.clone(),
                        port: false,
                    });
                }
            }
            ItemKind::Assign(a) => {
                let target = resolve(n, inst, &a.target, scope, &[], true);
                let rhs = resolve(n, inst, &a.rhs, scope, &[], false);
                n.combs.push(Comb {
                    inst,
                    target,
                    rhs,
                    span: a.span.clone(),
                    port: false,
                });
            }
            ItemKind::Process(p) => {
                let locals = &p.locals;
                let clock = p
                    .clock
                    .as_ref()
                    .map(|c| (resolve(n, inst, &c.signal, scope, locals, false), c.edge));
                let async_controls = p
                    .async_controls
                    .iter()
                    .map(|a| {
                        (
                            resolve(n, inst, &a.signal, scope, locals, false),
                            a.active_high,
                        )
                    })
                    .collect();
                let assigns = p
                    .assigns
                    .iter()
                    .map(|a| FAssign {
                        target: resolve(n, inst, &a.target, scope, locals, false),
                        rhs: resolve(n, inst, &a.rhs, scope, locals, false),
                        guards: a
                            .guards
                            .iter()
                            .map(|g| Guard {
                                cond: resolve(n, inst, &g.cond, scope, locals, false),
                                polarity: g.polarity,
                            })
                            .collect(),
                        in_reset: a.in_reset,
                        span: a.span.clone(),
                    })
                    .collect();
                // a process whose clock is a level list (`always @(a or b)`) is combinational
                let clock = clock.filter(|(_, e)| *e != Edge::Any);
                n.procs.push(Proc {
                    inst,
                    clock,
                    async_controls,
                    assigns,
                    span: p.span.clone(),
                    file,
                });
            }
            ItemKind::Instance(i) => instantiate(index, config, n, inst, i, scope, depth),
            ItemKind::GenerateFor(g) => {
                let mut scopes = Vec::new();
                unroll(g, scope, |s| scopes.push(s));
                for mut s in scopes {
                    flatten_items(index, config, n, inst, &g.items, &mut s, file, depth);
                }
            }
            ItemKind::GenerateIf(g) => {
                if let Some((items, label)) = choose(g, scope) {
                    let mut s = sub_scope(scope, label);
                    flatten_items(index, config, n, inst, items, &mut s, file, depth);
                }
            }
            _ => {}
        }
    }
}

fn instantiate(
    index: &ModuleIndex,
    config: &Config,
    n: &mut Netlist,
    parent: usize,
    i: &Instance,
    scope: &Scope,
    depth: usize,
) {
    let path = format!("{}{}", scope.prefixes[0], i.name);
    let cell = config.cells.get(&i.module).cloned();
    let def = if cell.is_some() {
        None
    } else {
        index.by_name.get(i.module.as_str()).copied()
    };
    let child = n.insts.len();
    n.insts.push(Inst {
        path: path.clone(),
        module: i.module.clone(),
        parent: Some(parent),
        def,
        cell: cell.clone(),
        trusted: config.synchronizers.modules.contains(&i.module) || n.insts[parent].trusted,
        span: i.name_span.clone(),
    });
    // connection list by port name
    let mut conns: Vec<(String, Option<Expr>)> = Vec::new();
    let def_module = def.map(|(f, m)| &index.files[f].modules[m]);
    for (k, c) in i.connections.iter().enumerate() {
        let port = match (&c.port, def_module) {
            (Some(p), _) => p.clone(),
            (None, Some(m)) => match m.ports.get(k) {
                Some(p) => p.name.clone(),
                None => continue,
            },
            (None, None) => format!("#{k}"),
        };
        conns.push((port, c.expr.clone()));
    }
    if i.wildcard {
        if let Some(m) = def_module {
            for p in &m.ports {
                if !conns.iter().any(|(n, _)| n == &p.name) {
                    conns.push((
                        p.name.clone(),
                        Some(Expr::Ident {
                            name: p.name.clone(),
                            loc: Loc::default(),
                        }),
                    ));
                }
            }
        }
    }
    let span = i.name_span.clone();
    match (def_module, &cell) {
        (Some(m), _) => {
            let env = params_env(index, m, &i.params, &scope.env);
            let (fi, _) = def.unwrap_or((0, 0));
            elab_module(index, config, n, child, m, fi, env, depth + 1);
            for (port, expr) in conns {
                let Some(expr) = expr else { continue };
                let dir = m
                    .ports
                    .iter()
                    .find(|p| p.name == port)
                    .and_then(|p| p.direction)
                    .unwrap_or(Direction::Input);
                let child_sig = Expr::Ident {
                    name: format!("{path}.{port}"),
                    loc: Loc::default(),
                };
                if !n.by_name.contains_key(&format!("{path}.{port}")) {
                    continue;
                }
                let parent_e = resolve(n, parent, &expr, scope, &[], true);
                let c = match dir {
                    Direction::Output => Comb {
                        inst: parent,
                        target: parent_e,
                        rhs: child_sig,
                        span: span.clone(),
                        port: true,
                    },
                    _ => Comb {
                        inst: child,
                        target: child_sig,
                        rhs: parent_e,
                        span: span.clone(),
                        port: true,
                    },
                };
                n.combs.push(c);
            }
        }
        (None, Some(cell)) => cell_netlist(n, parent, child, cell, conns, scope, &span),
        (None, None) => {
            n.unresolved.push((i.module.clone(), span.clone()));
            for (port, expr) in conns {
                let Some(expr) = expr else { continue };
                let parent_e = resolve(n, parent, &expr, scope, &[], true);
                if let Some(b) = parent_e.base_name() {
                    if let Some(&s) = n.by_name.get(b) {
                        n.blackbox_pins.push((child, port.clone(), s));
                    }
                }
            }
        }
    }
}

/// A chain of flops that stands for a synchronizer cell.
struct CellChain {
    /// Stage names: `<prefix>1`, `<prefix>2`, ...
    prefix: &'static str,
    width: Option<u32>,
    clock: Expr,
    /// Active-low async reset of every stage (to 0), for reset synchronizers.
    reset: Option<Expr>,
    /// What stage 1 samples.
    first: Expr,
    /// The parent's net that the last stage drives.
    output: Expr,
    stages: u32,
}

fn cell_chain(n: &mut Netlist, parent: usize, child: usize, span: &Span, c: CellChain) {
    let path = n.insts[child].path.clone();
    let mut prev = c.first;
    for k in 1..=c.stages.max(1) {
        let name = format!("{path}.{}{k}", c.prefix);
        let local = format!("{}{k}", c.prefix);
        add_sig(n, child, &name, &local, c.width, 0, false, None, span);
        let q = Expr::Ident {
            name,
            loc: Loc::default(),
        };
        let mut assigns = Vec::new();
        if c.reset.is_some() {
            assigns.push(FAssign {
                target: q.clone(),
                rhs: Expr::Const {
                    text: "1'b0".into(),
                    value: Some(0),
                    width: Some(1),
                },
                guards: vec![],
                in_reset: true,
                span: span.clone(),
            });
        }
        assigns.push(FAssign {
            target: q.clone(),
            rhs: prev,
            guards: vec![],
            in_reset: false,
            span: span.clone(),
        });
        n.procs.push(Proc {
            inst: child,
            clock: Some((c.clock.clone(), Edge::Posedge)),
            async_controls: c.reset.iter().map(|r| (r.clone(), false)).collect(),
            assigns,
            span: span.clone(),
            file: 0,
        });
        prev = q;
    }
    n.combs.push(Comb {
        inst: parent,
        target: c.output,
        rhs: prev,
        span: span.clone(),
        port: true,
    });
}

/// Model a `[cells]` instance by what its pins mean.
fn cell_netlist(
    n: &mut Netlist,
    parent: usize,
    child: usize,
    cell: &Cell,
    conns: Vec<(String, Option<Expr>)>,
    scope: &Scope,
    span: &Span,
) {
    let get = |n: &mut Netlist, pin: &str| -> Option<Expr> {
        conns
            .iter()
            .find(|(p, _)| p == pin)
            .and_then(|(_, e)| e.clone())
            .map(|e| resolve(n, parent, &e, scope, &[], true))
    };
    let call = |name: &str, args: Vec<Expr>| Expr::Call {
        name: name.to_string(),
        args,
    };
    match cell {
        Cell::ClockBuffer { input, output } => {
            if let (Some(o), Some(i)) = (get(n, output), get(n, input)) {
                n.combs.push(Comb {
                    inst: parent,
                    target: o,
                    rhs: i,
                    span: span.clone(),
                    port: true,
                });
            }
        }
        Cell::ClockGate {
            clock,
            enable,
            output,
        } => {
            if let (Some(o), Some(c), Some(e)) = (get(n, output), get(n, clock), get(n, enable)) {
                n.combs.push(Comb {
                    inst: parent,
                    target: o,
                    rhs: call("$seam_clock_gate", vec![c, e]),
                    span: span.clone(),
                    port: true,
                });
            }
        }
        Cell::ClockMux {
            inputs,
            select,
            output,
        } => {
            if let Some(o) = get(n, output) {
                let mut args = vec![get(n, select).unwrap_or(Expr::Const {
                    text: "0".into(),
                    value: Some(0),
                    width: None,
                })];
                for i in inputs {
                    if let Some(e) = get(n, i) {
                        args.push(e);
                    }
                }
                n.combs.push(Comb {
                    inst: parent,
                    target: o,
                    rhs: call("$seam_clock_mux", args),
                    span: span.clone(),
                    port: true,
                });
            }
        }
        Cell::ClockSource { outputs } => {
            for pin in outputs {
                if let Some(o) = get(n, pin) {
                    let root = format!("{}.{pin}", n.insts[child].path);
                    n.combs.push(Comb {
                        inst: parent,
                        target: o,
                        rhs: call(
                            "$seam_clock_source",
                            vec![Expr::Const {
                                text: root,
                                value: None,
                                width: None,
                            }],
                        ),
                        span: span.clone(),
                        port: true,
                    });
                }
            }
        }
        Cell::Synchronizer {
            clock,
            input,
            output,
            stages,
        } => {
            // modelled as the chain it stands for: N flops on the cell's clock
            if let (Some(o), Some(c), Some(i)) = (get(n, output), get(n, clock), get(n, input)) {
                let width = o
                    .base_name()
                    .and_then(|b| n.by_name.get(b))
                    .and_then(|s| n.sigs[*s].width);
                let chain = CellChain {
                    prefix: "stage",
                    width,
                    clock: c,
                    reset: None,
                    first: i,
                    output: o,
                    stages: *stages,
                };
                cell_chain(n, parent, child, span, chain);
            }
        }
        Cell::ResetSynchronizer {
            clock,
            reset,
            output,
            stages,
        } => {
            // modelled as the chain it stands for: N flops on the cell's clock, reset by the
            // raw reset to 0, stage 1 shifting in 1 (cdc::resets recognises it)
            if let (Some(o), Some(c), Some(r)) = (get(n, output), get(n, clock), get(n, reset)) {
                let chain = CellChain {
                    prefix: "rst_stage",
                    width: Some(1),
                    clock: c,
                    reset: Some(r),
                    first: Expr::Const {
                        text: "1'b1".into(),
                        value: Some(1),
                        width: Some(1),
                    },
                    output: o,
                    stages: *stages,
                };
                cell_chain(n, parent, child, span, chain);
            }
        }
        Cell::Flop {
            clock,
            input,
            output,
            reset,
        } => {
            if let (Some(o), Some(c), Some(i)) = (get(n, output), get(n, clock), get(n, input)) {
                let async_controls = reset
                    .as_ref()
                    .and_then(|r| get(n, r))
                    .map(|r| vec![(r, false)])
                    .unwrap_or_default();
                n.procs.push(Proc {
                    inst: parent,
                    clock: Some((c, Edge::Posedge)),
                    async_controls,
                    assigns: vec![FAssign {
                        target: o,
                        rhs: i,
                        guards: vec![],
                        in_reset: false,
                        span: span.clone(),
                    }],
                    span: span.clone(),
                    file: 0,
                });
            }
        }
    }
}
