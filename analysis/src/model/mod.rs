//! The per-file model: what one file contributes to the design, with the syntax tree dropped.
//!
//! A module is a list of items (declarations, processes, assigns, instances, generate
//! blocks), each with its span, so an edit can later replace one item. Parameters and
//! generate blocks stay symbolic: the model depends only on the file's text and its
//! preprocessor context.

pub mod expr;

use serde::{Deserialize, Serialize};

pub use expr::{parse_expr, render, Expr, Loc, Select};

/// A location in an original (not preprocessed) file. Lines and columns are 1-based;
/// columns count Unicode code points.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize, Default)]
pub struct Span {
    pub file: String,
    pub start: usize,
    pub end: usize,
    pub line: u32,
    pub column: u32,
    pub end_line: u32,
    pub end_column: u32,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Language {
    Verilog,
    SystemVerilog,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct FileModel {
    pub path: String,
    pub language: Language,
    pub modules: Vec<Module>,
    /// Packages defined in this file (compile order puts them first).
    pub packages: Vec<Package>,
    /// Problems found while reading this file (syntax errors, limits).
    pub problems: Vec<Problem>,
    /// `// seam: allow(rule) reason` comments.
    pub waivers: Vec<WaiverComment>,
    /// Files pulled in by `include (they are part of this file's cache key).
    pub includes: Vec<String>,
}

/// A problem reading a file; becomes a `syntax-error` finding.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Problem {
    pub span: Span,
    pub message: String,
    /// Informational only (e.g. an empty file), reported at hint severity.
    #[serde(default)]
    pub hint: bool,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct WaiverComment {
    pub line: u32,
    pub rules: Vec<String>,
    /// Empty when the user gave no reason (that is reported).
    pub reason: String,
    pub span: Span,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ModuleKind {
    Module,
    Interface,
    Program,
}

/// A package's named constants (parameters and enumeration members, in source order).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Package {
    pub name: String,
    pub params: Vec<Param>,
    /// `p::*` or `p::x` for each `import` inside the package.
    pub imports: Vec<String>,
    pub span: Span,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Module {
    pub name: String,
    pub kind: ModuleKind,
    /// The span of the module's name in its header.
    pub name_span: Span,
    /// The whole declaration.
    pub span: Span,
    pub params: Vec<Param>,
    pub ports: Vec<Port>,
    pub items: Vec<Item>,
    pub attributes: Vec<Attribute>,
    /// `p::*` or `p::x`: the module's imports, then those of the file before it.
    #[serde(default)]
    pub imports: Vec<String>,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Attribute {
    pub name: String,
    pub value: Option<String>,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Param {
    pub name: String,
    /// `localparam` cannot be overridden.
    pub local: bool,
    pub default: Option<Expr>,
    pub span: Span,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Direction {
    Input,
    Output,
    Inout,
    Ref,
}

/// `[msb:lsb]`, kept symbolic.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Range {
    pub msb: Expr,
    pub lsb: Expr,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Port {
    pub name: String,
    pub direction: Option<Direction>,
    /// Packed dimensions, outermost first.
    pub packed: Vec<Range>,
    pub unpacked: Vec<Range>,
    /// Declared as a variable (`reg`, `logic` in a variable port, `output reg`).
    pub is_var: bool,
    /// Type text when it is not a plain vector (struct, enum, interface port...).
    pub type_name: Option<String>,
    pub span: Span,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Item {
    pub span: Span,
    pub kind: ItemKind,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "item", rename_all = "snake_case")]
pub enum ItemKind {
    Decl(Decl),
    /// A non-ANSI port direction declaration inside the body (`input [3:0] a;`).
    PortDecl(Port),
    Param(Param),
    Process(Process),
    Assign(Assignment),
    Instance(Instance),
    GenerateFor(GenerateFor),
    GenerateIf(GenerateIf),
    /// A function declared in the module: its body is executed where a value is needed
    /// (gray-code checks), calls stay calls elsewhere.
    Function(Function),
    /// Constructs that do not count for domains (initial, assertions, final, clocking).
    Ignored {
        what: String,
    },
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DeclKind {
    Net,
    Var,
    Genvar,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Decl {
    pub name: String,
    pub kind: DeclKind,
    pub packed: Vec<Range>,
    /// Unpacked dimensions: a memory when non-empty.
    pub unpacked: Vec<Range>,
    pub type_name: Option<String>,
    /// Net declaration assignment (`wire a = b;`) or variable initialiser.
    pub init: Option<Expr>,
    pub span: Span,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ProcessKind {
    Always,
    AlwaysFf,
    AlwaysComb,
    AlwaysLatch,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Edge {
    Posedge,
    Negedge,
    /// `edge` or a level-sensitive entry.
    Any,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Event {
    pub edge: Edge,
    pub signal: Expr,
}

/// An asynchronous control (reset or set) of an edge-controlled process.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct AsyncControl {
    pub signal: Expr,
    /// True when the branch is taken while the signal is high.
    pub active_high: bool,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Process {
    pub kind: ProcessKind,
    /// The event list as written (empty for always_comb and `@*`).
    pub events: Vec<Event>,
    /// The edge that is the clock: the event not tested as an async control.
    pub clock: Option<Event>,
    pub async_controls: Vec<AsyncControl>,
    pub assigns: Vec<Assignment>,
    /// Names declared locally inside the process (block-level variables).
    pub locals: Vec<String>,
    pub span: Span,
}

/// A guarding condition on the path to an assignment.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Guard {
    pub cond: Expr,
    /// False for the else branch (the condition is negated).
    pub polarity: bool,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Assignment {
    pub target: Expr,
    pub rhs: Expr,
    /// if/case conditions on the path, outermost first (async control tests excluded).
    pub guards: Vec<Guard>,
    /// Sits in the branch of an async control (reset or set).
    pub in_reset: bool,
    /// `=` (or a continuous assign) rather than `<=`.
    pub blocking: bool,
    /// Inside a procedural loop (`for`): its target index depends on the loop variable.
    pub in_loop: bool,
    pub span: Span,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Connection {
    /// Port name for a named connection; `None` for an ordered one.
    pub port: Option<String>,
    /// `None` for an explicitly unconnected port `.p()`.
    pub expr: Option<Expr>,
    pub span: Span,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Instance {
    pub module: String,
    pub name: String,
    /// Instance array dimensions (`u_x[3:0]`).
    pub array: Vec<Range>,
    pub params: Vec<Connection>,
    pub connections: Vec<Connection>,
    /// `.*` was used.
    pub wildcard: bool,
    pub name_span: Span,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct GenerateFor {
    pub genvar: String,
    pub init: Expr,
    pub cond: Expr,
    /// Next value of the genvar (`i + 1` for `i++`).
    pub step: Expr,
    pub label: Option<String>,
    pub items: Vec<Item>,
}

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct GenerateIf {
    /// `(condition, items)`; a final `None` condition is the else branch.
    pub branches: Vec<(Option<Expr>, Vec<Item>)>,
    pub labels: Vec<Option<String>>,
}

/// A variable of a function: an argument, a local, or the return value (named as the
/// function).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct FuncVar {
    pub name: String,
    pub packed: Vec<Range>,
    /// Width of an integer atom type (`int` 32, `byte` 8...); signed when it is one.
    pub atom: Option<u32>,
    /// A type that is neither a vector nor an integer atom (struct, enum, typedef).
    pub other_type: bool,
}

/// `function ... endfunction`, with its body as statements in order.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Function {
    pub name: String,
    pub ret: FuncVar,
    /// Input arguments in order (a function with other directions is kept, but not run).
    pub args: Vec<FuncVar>,
    pub locals: Vec<FuncVar>,
    pub body: Vec<Stmt>,
    /// Set when an argument is not an input.
    pub has_outputs: bool,
}

/// A statement of a function body.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(tag = "stmt", rename_all = "snake_case")]
pub enum Stmt {
    /// A blocking assignment (`x op= y` is kept as `x = x op y`).
    Assign {
        target: Expr,
        rhs: Expr,
    },
    If {
        cond: Expr,
        then: Vec<Stmt>,
        other: Vec<Stmt>,
    },
    Case {
        sel: Expr,
        items: Vec<(Vec<Expr>, Vec<Stmt>)>,
        default: Vec<Stmt>,
    },
    For {
        init: Vec<Stmt>,
        cond: Expr,
        step: Vec<Stmt>,
        body: Vec<Stmt>,
    },
    Return {
        value: Option<Expr>,
    },
    /// Anything else: executing it gives up.
    Unsupported {
        what: String,
    },
}

impl Module {
    /// Every item, generate bodies included (depth first).
    pub fn all_items(&self) -> Vec<&Item> {
        fn rec<'a>(items: &'a [Item], out: &mut Vec<&'a Item>) {
            for it in items {
                out.push(it);
                match &it.kind {
                    ItemKind::GenerateFor(g) => rec(&g.items, out),
                    ItemKind::GenerateIf(g) => g.branches.iter().for_each(|(_, b)| rec(b, out)),
                    _ => {}
                }
            }
        }
        let mut out = Vec::new();
        rec(&self.items, &mut out);
        out
    }

    /// Processes that count for domains.
    pub fn processes(&self) -> impl Iterator<Item = &Process> {
        self.all_items().into_iter().filter_map(|i| match &i.kind {
            ItemKind::Process(p) => Some(p),
            _ => None,
        })
    }

    pub fn instances(&self) -> impl Iterator<Item = &Instance> {
        self.all_items().into_iter().filter_map(|i| match &i.kind {
            ItemKind::Instance(p) => Some(p),
            _ => None,
        })
    }

    /// A testbench: no ports, or only `initial` code and no synthesizable processes.
    pub fn is_testbench(&self) -> bool {
        let has_synth = self
            .all_items()
            .iter()
            .any(|i| matches!(i.kind, ItemKind::Process(_) | ItemKind::Assign(_)));
        self.ports.is_empty()
            && !self
                .items
                .iter()
                .any(|i| matches!(i.kind, ItemKind::PortDecl(_)))
            || (!has_synth
                && self
                    .all_items()
                    .iter()
                    .any(|i| matches!(&i.kind, ItemKind::Ignored { what } if what == "initial")))
    }
}
