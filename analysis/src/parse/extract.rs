//! Syntax tree → FileModel. The tree is walked once per construct; expressions are taken as
//! text and parsed into the IR (see `model::expr`); every offset is mapped back from the
//! preprocessed text to the original file.

use std::path::Path;

use sv_parser::{
    AlwaysKeyword, BlockingAssignment, CaseItem, CaseStatement, ConditionalStatement, Locate,
    NodeEvent, RefNode, RefNodes, Statement, StatementItem, StatementOrNull, SyntaxTree,
};

mod constants;
mod function;

use super::position::LineIndex;
use crate::model::expr::{opaque, parse_expr};
use crate::model::*;

pub struct Extractor<'a> {
    path: &'a str,
    display: &'a str,
    text: &'a str,
    tree: &'a SyntaxTree,
    ix: LineIndex<'a>,
}

enum Walk {
    Descend,
    Skip,
}

/// Visit every node under `root` (not `root` itself) in order; `Skip` prunes a subtree.
fn walk<'t>(root: RefNode<'t>, mut f: impl FnMut(RefNode<'t>) -> Walk) {
    let mut depth = 0usize;
    let mut skip_at: Option<usize> = None;
    for ev in root.into_iter().event() {
        match ev {
            NodeEvent::Enter(n) => {
                depth += 1;
                if skip_at.is_some() || depth == 1 {
                    continue;
                }
                if let Walk::Skip = f(n) {
                    skip_at = Some(depth);
                }
            }
            NodeEvent::Leave(_) => {
                if skip_at == Some(depth) {
                    skip_at = None;
                }
                depth -= 1;
            }
        }
    }
}

/// Direct and indirect nodes of one kind under root, not looking inside matches.
fn find_all<'t, T>(root: RefNode<'t>, pick: impl Fn(&RefNode<'t>) -> Option<T>) -> Vec<T> {
    let mut out = Vec::new();
    walk(root, |n| match pick(&n) {
        Some(t) => {
            out.push(t);
            Walk::Skip
        }
        None => Walk::Descend,
    });
    out
}

fn find_first<'t, T>(root: RefNode<'t>, pick: impl Fn(&RefNode<'t>) -> Option<T>) -> Option<T> {
    let mut out = None;
    walk(root, |n| {
        if out.is_some() {
            return Walk::Skip;
        }
        match pick(&n) {
            Some(t) => {
                out = Some(t);
                Walk::Skip
            }
            None => Walk::Descend,
        }
    });
    out
}

#[derive(Clone, Default)]
struct Ctx {
    guards: Vec<Guard>,
    in_reset: bool,
    in_loop: bool,
}

impl<'a> Extractor<'a> {
    pub fn new(path: &'a str, display: &'a str, text: &'a str, tree: &'a SyntaxTree) -> Self {
        Extractor {
            path,
            display,
            text,
            tree,
            ix: LineIndex::new(text),
        }
    }

    pub fn run(self) -> (Vec<Module>, Vec<Package>) {
        let mut modules = Vec::new();
        let mut packages = Vec::new();
        // compilation-unit imports seen so far: they apply to the modules after them
        let mut unit_imports: Vec<String> = Vec::new();
        let root: RefNode = self.tree.into_iter().next().expect("tree has a root");
        let mut all = vec![root.clone()];
        // the iterator includes the root itself; walk skips it, so look at it first
        all.truncate(1);
        let mut visit = |n: RefNode<'a>| -> Walk {
            match n {
                RefNode::ModuleDeclarationAnsi(_) | RefNode::ModuleDeclarationNonansi(_) => {
                    modules.push(self.module(n, ModuleKind::Module, &unit_imports));
                    Walk::Skip
                }
                RefNode::InterfaceDeclarationAnsi(_) | RefNode::InterfaceDeclarationNonansi(_) => {
                    modules.push(self.module(n, ModuleKind::Interface, &unit_imports));
                    Walk::Skip
                }
                RefNode::ProgramDeclarationAnsi(_) | RefNode::ProgramDeclarationNonansi(_) => {
                    modules.push(self.module(n, ModuleKind::Program, &unit_imports));
                    Walk::Skip
                }
                RefNode::PackageDeclaration(_) => {
                    packages.push(self.package(n));
                    Walk::Skip
                }
                RefNode::PackageImportDeclaration(_) => {
                    unit_imports.extend(self.imports(n));
                    Walk::Skip
                }
                _ => Walk::Descend,
            }
        };
        for n in all {
            walk(n, &mut visit);
        }
        (modules, packages)
    }

    // ------------------------------------------------------------ text and positions

    /// Preprocessed byte range of a node, trimmed of whitespace and comments.
    fn range(&self, n: RefNode) -> Option<(usize, usize)> {
        let mut beg = None;
        let mut end = 0;
        let mut ws = 0usize;
        for ev in n.into_iter().event() {
            match ev {
                NodeEvent::Enter(RefNode::WhiteSpace(_)) => ws += 1,
                NodeEvent::Leave(RefNode::WhiteSpace(_)) => ws -= 1,
                NodeEvent::Enter(RefNode::Locate(l)) if ws == 0 => {
                    if beg.is_none() {
                        beg = Some(l.offset);
                    }
                    end = l.offset + l.len;
                }
                _ => {}
            }
        }
        beg.map(|b| (b, end))
    }

    fn str(&self, n: RefNode<'a>) -> &'a str {
        self.tree.get_str_trim(RefNodes(vec![n])).unwrap_or("")
    }

    /// Map a preprocessed offset to this file; text from includes or macro bodies maps to
    /// the nearest preceding text of this file (the macro use or the `include line).
    fn map(&self, pp: usize) -> usize {
        let here = Path::new(self.path);
        let probe = |o: usize| {
            self.tree.get_origin(&Locate {
                offset: o,
                line: 0,
                len: 1,
            })
        };
        match probe(pp) {
            Some((p, o)) if p.as_path() == here => return o,
            _ => {}
        }
        let mut o = pp;
        let mut steps = 0;
        while o > 0 && steps < 200_000 {
            o -= 1;
            steps += 1;
            if let Some((p, orig)) = probe(o) {
                if p.as_path() == here {
                    return (orig + 1).min(self.text.len());
                }
            }
        }
        0
    }

    fn span_of(&self, n: RefNode) -> Span {
        match self.range(n) {
            Some((b, e)) => {
                let s = self.map(b);
                let en = self.map(e.saturating_sub(1)) + 1;
                self.ix
                    .span(self.display, s, en.max(s).min(self.text.len()))
            }
            None => self.ix.span(self.display, 0, 0),
        }
    }

    /// An expression node → IR, with identifier locations in original-file offsets.
    fn expr(&self, n: RefNode<'a>) -> Expr {
        let text = self.str(n.clone());
        let base = self.range(n).map(|r| r.0).unwrap_or(0);
        self.expr_text(text, base)
    }

    fn expr_text(&self, text: &str, pp_base: usize) -> Expr {
        let mut e = parse_expr(text);
        e.map_locs(&mut |l| {
            let s = self.map(pp_base + l.start as usize);
            let en = self.map(pp_base + (l.end as usize).saturating_sub(1)) + 1;
            Loc {
                start: s as u32,
                end: en.max(s) as u32,
            }
        });
        e
    }

    // ------------------------------------------------------------ modules

    fn module(&self, n: RefNode<'a>, kind: ModuleKind, unit_imports: &[String]) -> Module {
        let header = find_first(n.clone(), |c| match c {
            RefNode::ModuleAnsiHeader(_)
            | RefNode::ModuleNonansiHeader(_)
            | RefNode::InterfaceAnsiHeader(_)
            | RefNode::InterfaceNonansiHeader(_)
            | RefNode::ProgramAnsiHeader(_)
            | RefNode::ProgramNonansiHeader(_) => Some(c.clone()),
            _ => None,
        });
        let name_node = find_first(n.clone(), |c| match c {
            RefNode::ModuleIdentifier(_)
            | RefNode::InterfaceIdentifier(_)
            | RefNode::ProgramIdentifier(_) => Some(c.clone()),
            _ => None,
        });
        let name = name_node
            .clone()
            .map(|x| self.str(x).to_string())
            .unwrap_or_default();
        let name_span = name_node.map(|x| self.span_of(x)).unwrap_or_default();
        let mut m = Module {
            name,
            kind,
            name_span,
            span: self.span_of(n.clone()),
            params: vec![],
            ports: vec![],
            items: vec![],
            attributes: vec![],
            imports: vec![],
        };
        m.imports = self.imports(n.clone());
        m.imports.extend(unit_imports.iter().cloned());
        if let Some(h) = header.clone() {
            m.attributes = find_all(h.clone(), |c| match c {
                RefNode::AttrSpec(_) => Some(c.clone()),
                _ => None,
            })
            .into_iter()
            .map(|a| {
                let t = self.str(a);
                match t.split_once('=') {
                    Some((k, v)) => Attribute {
                        name: k.trim().into(),
                        value: Some(v.trim().into()),
                    },
                    None => Attribute {
                        name: t.trim().into(),
                        value: None,
                    },
                }
            })
            .collect();
            // parameters in the #( ) list
            if let Some(ppl) = find_first(h.clone(), |c| {
                matches!(c, RefNode::ParameterPortList(_)).then(|| c.clone())
            }) {
                m.params = self.params_in(ppl, false);
            }
            // ANSI ports
            let mut last_dir = None;
            let mut last_packed: Vec<Range> = vec![];
            let mut last_var = false;
            for p in find_all(h.clone(), |c| {
                matches!(c, RefNode::AnsiPortDeclaration(_)).then(|| c.clone())
            }) {
                let mut port = self.ansi_port(p);
                if port.direction.is_none() && port.packed.is_empty() && port.type_name.is_none() {
                    // `input [3:0] a, b`: b inherits a's direction and type
                    port.direction = last_dir;
                    port.packed = last_packed.clone();
                    port.is_var = last_var;
                } else if port.direction.is_none() {
                    port.direction = last_dir;
                }
                last_dir = port.direction;
                last_packed = port.packed.clone();
                last_var = port.is_var;
                m.ports.push(port);
            }
            // non-ANSI port names
            if let Some(lp) = find_first(h.clone(), |c| {
                matches!(c, RefNode::ListOfPorts(_)).then(|| c.clone())
            }) {
                for pr in find_all(lp, |c| {
                    matches!(c, RefNode::PortIdentifier(_)).then(|| c.clone())
                }) {
                    m.ports.push(Port {
                        name: self.str(pr.clone()).to_string(),
                        direction: None,
                        packed: vec![],
                        unpacked: vec![],
                        is_var: false,
                        type_name: None,
                        span: self.span_of(pr),
                    });
                }
            }
        }
        m.items = self.items(n, header.as_ref());
        // merge body port declarations (non-ANSI) into the port list
        for it in &m.items {
            if let ItemKind::PortDecl(pd) = &it.kind {
                if let Some(p) = m.ports.iter_mut().find(|p| p.name == pd.name) {
                    p.direction = pd.direction;
                    p.packed = pd.packed.clone();
                    p.is_var |= pd.is_var;
                    p.type_name = pd.type_name.clone();
                } else {
                    m.ports.push(pd.clone());
                }
            }
        }
        // `output q; reg q;` makes q a variable
        let vars: Vec<String> = m
            .items
            .iter()
            .filter_map(|i| match &i.kind {
                ItemKind::Decl(d) if d.kind == DeclKind::Var => Some(d.name.clone()),
                _ => None,
            })
            .collect();
        for p in &mut m.ports {
            if vars.contains(&p.name) {
                p.is_var = true;
            }
        }
        // body parameters join the parameter list
        let body_params: Vec<Param> = m
            .items
            .iter()
            .filter_map(|i| match &i.kind {
                ItemKind::Param(p) => Some(p.clone()),
                _ => None,
            })
            .collect();
        m.params.extend(body_params);
        m
    }

    fn params_in(&self, n: RefNode<'a>, force_local: bool) -> Vec<Param> {
        let mut out = Vec::new();
        let mut local = force_local;
        walk(n, |c| match c {
            RefNode::LocalParameterDeclaration(_) => {
                for pa in find_all(c, |x| {
                    matches!(x, RefNode::ParamAssignment(_)).then(|| x.clone())
                }) {
                    out.push(self.param(pa, true));
                }
                Walk::Skip
            }
            RefNode::ParameterDeclaration(_) => {
                local = force_local;
                Walk::Descend
            }
            RefNode::ParamAssignment(_) => {
                out.push(self.param(c, local));
                Walk::Skip
            }
            _ => Walk::Descend,
        });
        out
    }

    fn param(&self, pa: RefNode<'a>, local: bool) -> Param {
        let RefNode::ParamAssignment(x) = pa.clone() else {
            unreachable!()
        };
        let name = self.str(RefNode::from(&x.nodes.0)).to_string();
        let default = x.nodes.2.as_ref().map(|(_, e)| self.expr(RefNode::from(e)));
        Param {
            name,
            local,
            default,
            span: self.span_of(pa),
        }
    }

    fn ranges(&self, n: RefNode<'a>) -> Vec<Range> {
        let mut out = Vec::new();
        walk(n, |c| match c {
            RefNode::ConstantRange(r) => {
                out.push(Range {
                    msb: self.expr(RefNode::from(&r.nodes.0)),
                    lsb: self.expr(RefNode::from(&r.nodes.2)),
                });
                Walk::Skip
            }
            RefNode::UnpackedDimensionExpression(u) => {
                // [N] means [0:N-1]
                let n = self.expr(RefNode::from(&u.nodes.0.nodes.1));
                out.push(Range {
                    msb: Expr::Binary {
                        op: "-".into(),
                        lhs: Box::new(n),
                        rhs: Box::new(Expr::Const {
                            text: "1".into(),
                            value: Some(1),
                            width: None,
                        }),
                    },
                    lsb: Expr::Const {
                        text: "0".into(),
                        value: Some(0),
                        width: None,
                    },
                });
                Walk::Skip
            }
            // don't look into initialisers or nested declarations
            RefNode::Expression(_) => Walk::Skip,
            _ => Walk::Descend,
        });
        out
    }

    /// Packed dimensions of a declaration: ranges outside the declared names.
    fn packed_dims(&self, n: RefNode<'a>) -> Vec<Range> {
        let mut out = Vec::new();
        walk(n, |c| match c {
            RefNode::PackedDimensionRange(_) => {
                out.extend(self.ranges(c));
                Walk::Skip
            }
            RefNode::NetDeclAssignment(_)
            | RefNode::VariableDeclAssignment(_)
            | RefNode::ListOfPortIdentifiers(_)
            | RefNode::ListOfVariableIdentifiers(_)
            | RefNode::UnpackedDimension(_)
            | RefNode::VariableDimension(_) => Walk::Skip,
            _ => Walk::Descend,
        });
        out
    }

    /// Type text when the type is not a plain (implicit or integer-vector) type.
    fn type_name(&self, n: RefNode<'a>) -> Option<String> {
        find_first(n, |c| match c {
            RefNode::DataType(dt) => match dt {
                sv_parser::DataType::Vector(_) | sv_parser::DataType::Atom(_) => Some(None),
                _ => Some(Some(self.str(c.clone()).to_string())),
            },
            RefNode::InterfacePortHeader(_) => Some(Some(self.str(c.clone()).to_string())),
            _ => None,
        })
        .flatten()
    }

    fn direction(&self, n: RefNode<'a>) -> Option<Direction> {
        find_first(n, |c| match c {
            RefNode::PortDirection(d) => Some(match d {
                sv_parser::PortDirection::Input(_) => Direction::Input,
                sv_parser::PortDirection::Output(_) => Direction::Output,
                sv_parser::PortDirection::Inout(_) => Direction::Inout,
                sv_parser::PortDirection::Ref(_) => Direction::Ref,
            }),
            _ => None,
        })
    }

    fn ansi_port(&self, p: RefNode<'a>) -> Port {
        let name_node = find_first(p.clone(), |c| {
            matches!(c, RefNode::PortIdentifier(_)).then(|| c.clone())
        });
        let name = name_node
            .map(|x| self.str(x).to_string())
            .unwrap_or_default();
        let text = self.str(p.clone());
        let is_var = matches!(
            p,
            RefNode::AnsiPortDeclaration(sv_parser::AnsiPortDeclaration::Variable(_))
        ) || has_word(text, "reg")
            || (has_word(text, "logic") && !has_word(text, "input"))
            || has_word(text, "var");
        let unpacked = find_all(p.clone(), |c| {
            matches!(
                c,
                RefNode::UnpackedDimension(_) | RefNode::VariableDimension(_)
            )
            .then(|| c.clone())
        })
        .into_iter()
        .flat_map(|u| self.ranges(u))
        .collect();
        Port {
            name,
            direction: self.direction(p.clone()),
            packed: self.packed_dims(p.clone()),
            unpacked,
            is_var,
            type_name: self.type_name(p.clone()),
            span: self.span_of(p),
        }
    }

    // ------------------------------------------------------------ items

    fn items(&self, n: RefNode<'a>, header: Option<&RefNode<'a>>) -> Vec<Item> {
        let mut out = Vec::new();
        let header_range = header.and_then(|h| self.range(h.clone()));
        walk(n, |c| {
            if let (Some(hr), Some(r)) = (header_range, self.range(c.clone())) {
                if r.0 >= hr.0 && r.1 <= hr.1 {
                    return Walk::Skip;
                }
            }
            self.item(c, &mut out)
        });
        out
    }

    fn push_enum_members(&self, n: RefNode<'a>, out: &mut Vec<Item>) {
        for p in self.enum_members(n) {
            out.push(Item {
                span: p.span.clone(),
                kind: ItemKind::Param(p),
            });
        }
    }

    fn push(&self, out: &mut Vec<Item>, n: RefNode<'a>, kind: ItemKind) {
        out.push(Item {
            span: self.span_of(n),
            kind,
        });
    }

    fn item(&self, c: RefNode<'a>, out: &mut Vec<Item>) -> Walk {
        match c {
            RefNode::AlwaysConstruct(_) => {
                let p = self.process(c.clone());
                self.push(out, c, ItemKind::Process(p));
                Walk::Skip
            }
            RefNode::ContinuousAssign(_) => {
                for na in find_all(c.clone(), |x| {
                    matches!(
                        x,
                        RefNode::NetAssignment(_) | RefNode::VariableAssignment(_)
                    )
                    .then(|| x.clone())
                }) {
                    let (lhs, rhs) = match &na {
                        RefNode::NetAssignment(a) => {
                            (RefNode::from(&a.nodes.0), RefNode::from(&a.nodes.2))
                        }
                        RefNode::VariableAssignment(a) => {
                            (RefNode::from(&a.nodes.0), RefNode::from(&a.nodes.2))
                        }
                        _ => unreachable!(),
                    };
                    let a = Assignment {
                        target: self.expr(lhs),
                        rhs: self.expr(rhs),
                        guards: vec![],
                        in_reset: false,
                        blocking: true,
                        in_loop: false,
                        span: self.span_of(na.clone()),
                    };
                    self.push(out, na, ItemKind::Assign(a));
                }
                Walk::Skip
            }
            RefNode::ModuleInstantiation(_) => {
                for inst in self.instances(c.clone()) {
                    self.push(out, c.clone(), ItemKind::Instance(inst));
                }
                Walk::Skip
            }
            RefNode::NetDeclaration(_) => {
                let packed = self.packed_dims(c.clone());
                let type_name = self.type_name(c.clone());
                for d in find_all(c.clone(), |x| {
                    matches!(x, RefNode::NetDeclAssignment(_)).then(|| x.clone())
                }) {
                    let RefNode::NetDeclAssignment(a) = d.clone() else {
                        continue;
                    };
                    let decl = Decl {
                        name: self.str(RefNode::from(&a.nodes.0)).to_string(),
                        kind: DeclKind::Net,
                        packed: packed.clone(),
                        unpacked: a
                            .nodes
                            .1
                            .iter()
                            .flat_map(|u| self.ranges(RefNode::from(u)))
                            .collect(),
                        type_name: type_name.clone(),
                        init: a.nodes.2.as_ref().map(|(_, e)| self.expr(RefNode::from(e))),
                        span: self.span_of(d.clone()),
                    };
                    self.push(out, d, ItemKind::Decl(decl));
                }
                Walk::Skip
            }
            RefNode::DataDeclaration(sv_parser::DataDeclaration::Variable(_)) => {
                let packed = self.packed_dims(c.clone());
                let type_name = self.type_name(c.clone());
                for d in find_all(c.clone(), |x| {
                    matches!(x, RefNode::VariableDeclAssignment(_)).then(|| x.clone())
                }) {
                    let RefNode::VariableDeclAssignment(
                        sv_parser::VariableDeclAssignment::Variable(a),
                    ) = d.clone()
                    else {
                        continue;
                    };
                    let decl = Decl {
                        name: self.str(RefNode::from(&a.nodes.0)).to_string(),
                        kind: DeclKind::Var,
                        packed: packed.clone(),
                        unpacked: a
                            .nodes
                            .1
                            .iter()
                            .flat_map(|u| self.ranges(RefNode::from(u)))
                            .collect(),
                        type_name: type_name.clone(),
                        init: a.nodes.2.as_ref().map(|(_, e)| self.expr(RefNode::from(e))),
                        span: self.span_of(d.clone()),
                    };
                    self.push(out, d, ItemKind::Decl(decl));
                }
                self.push_enum_members(c, out);
                Walk::Skip
            }
            RefNode::DataDeclaration(_) => {
                // typedefs (their enumeration members are constants) and imports
                self.push_enum_members(c, out);
                Walk::Skip
            }
            RefNode::GenvarDeclaration(_) => {
                for g in find_all(c.clone(), |x| {
                    matches!(x, RefNode::GenvarIdentifier(_)).then(|| x.clone())
                }) {
                    let decl = Decl {
                        name: self.str(g.clone()).to_string(),
                        kind: DeclKind::Genvar,
                        packed: vec![],
                        unpacked: vec![],
                        type_name: None,
                        init: None,
                        span: self.span_of(g.clone()),
                    };
                    self.push(out, g, ItemKind::Decl(decl));
                }
                Walk::Skip
            }
            RefNode::PortDeclaration(_) => {
                let dir = match &c {
                    RefNode::PortDeclaration(sv_parser::PortDeclaration::Input(_)) => {
                        Some(Direction::Input)
                    }
                    RefNode::PortDeclaration(sv_parser::PortDeclaration::Output(_)) => {
                        Some(Direction::Output)
                    }
                    RefNode::PortDeclaration(sv_parser::PortDeclaration::Inout(_)) => {
                        Some(Direction::Inout)
                    }
                    RefNode::PortDeclaration(sv_parser::PortDeclaration::Ref(_)) => {
                        Some(Direction::Ref)
                    }
                    _ => None,
                };
                let text = self.str(c.clone());
                let is_var = has_word(text, "reg")
                    || has_word(text, "logic") && dir != Some(Direction::Input);
                let packed = self.packed_dims(c.clone());
                let type_name = self.type_name(c.clone());
                for id in find_all(c.clone(), |x| {
                    matches!(
                        x,
                        RefNode::PortIdentifier(_) | RefNode::VariableIdentifier(_)
                    )
                    .then(|| x.clone())
                }) {
                    let p = Port {
                        name: self.str(id.clone()).to_string(),
                        direction: dir,
                        packed: packed.clone(),
                        unpacked: vec![],
                        is_var,
                        type_name: type_name.clone(),
                        span: self.span_of(id.clone()),
                    };
                    self.push(out, id, ItemKind::PortDecl(p));
                }
                Walk::Skip
            }
            RefNode::ParameterDeclaration(_) | RefNode::LocalParameterDeclaration(_) => {
                let local = matches!(c, RefNode::LocalParameterDeclaration(_));
                for p in self.params_in(c.clone(), local) {
                    let span = p.span.clone();
                    out.push(Item {
                        span,
                        kind: ItemKind::Param(p),
                    });
                }
                Walk::Skip
            }
            RefNode::LoopGenerateConstruct(g) => {
                let (init, _, cond, _, iter) = &g.nodes.1.nodes.1;
                let genvar = self.str(RefNode::from(&init.nodes.1)).to_string();
                let init_e = self.expr(RefNode::from(&init.nodes.3));
                let cond_e = self.expr(RefNode::from(cond));
                let id = |s: &str| Expr::Ident {
                    name: s.to_string(),
                    loc: Loc::default(),
                };
                let one = Expr::Const {
                    text: "1".into(),
                    value: Some(1),
                    width: None,
                };
                let step = match iter {
                    sv_parser::GenvarIteration::Assignment(a) => {
                        let op = self.str(RefNode::from(&a.nodes.1));
                        let rhs = self.expr(RefNode::from(&a.nodes.2));
                        if op == "=" {
                            rhs
                        } else {
                            let bop = op.trim_end_matches('=').to_string();
                            Expr::Binary {
                                op: bop,
                                lhs: Box::new(id(&genvar)),
                                rhs: Box::new(rhs),
                            }
                        }
                    }
                    sv_parser::GenvarIteration::Prefix(p) => {
                        let op = if self.str(RefNode::from(&p.nodes.0)) == "++" {
                            "+"
                        } else {
                            "-"
                        };
                        Expr::Binary {
                            op: op.into(),
                            lhs: Box::new(id(&genvar)),
                            rhs: Box::new(one),
                        }
                    }
                    sv_parser::GenvarIteration::Suffix(p) => {
                        let op = if self.str(RefNode::from(&p.nodes.1)) == "++" {
                            "+"
                        } else {
                            "-"
                        };
                        Expr::Binary {
                            op: op.into(),
                            lhs: Box::new(id(&genvar)),
                            rhs: Box::new(one),
                        }
                    }
                };
                let block = RefNode::from(&g.nodes.2);
                let label = self.block_label(block.clone());
                let items = self.items(block, None);
                let gf = GenerateFor {
                    genvar,
                    init: init_e,
                    cond: cond_e,
                    step,
                    label,
                    items,
                };
                self.push(out, c, ItemKind::GenerateFor(gf));
                Walk::Skip
            }
            RefNode::IfGenerateConstruct(g) => {
                let cond = self.expr(RefNode::from(&g.nodes.1.nodes.1));
                let then_b = RefNode::from(&g.nodes.2);
                let mut branches = vec![(Some(cond), self.items(then_b.clone(), None))];
                let mut labels = vec![self.block_label(then_b)];
                if let Some((_, eb)) = &g.nodes.3 {
                    let eb = RefNode::from(eb);
                    labels.push(self.block_label(eb.clone()));
                    branches.push((None, self.items(eb, None)));
                }
                self.push(
                    out,
                    c,
                    ItemKind::GenerateIf(GenerateIf { branches, labels }),
                );
                Walk::Skip
            }
            RefNode::CaseGenerateConstruct(g) => {
                let sel = self.expr(RefNode::from(&g.nodes.1.nodes.1));
                let mut branches = Vec::new();
                let mut labels = Vec::new();
                for ci in &g.nodes.2 {
                    match ci {
                        sv_parser::CaseGenerateItem::Nondefault(nd) => {
                            let mut cond: Option<Expr> = None;
                            for e in nd.nodes.0.contents() {
                                let eq = Expr::Binary {
                                    op: "==".into(),
                                    lhs: Box::new(sel.clone()),
                                    rhs: Box::new(self.expr(RefNode::from(e))),
                                };
                                cond = Some(match cond {
                                    None => eq,
                                    Some(p) => Expr::Binary {
                                        op: "||".into(),
                                        lhs: Box::new(p),
                                        rhs: Box::new(eq),
                                    },
                                });
                            }
                            let b = RefNode::from(&nd.nodes.2);
                            labels.push(self.block_label(b.clone()));
                            branches.push((cond, self.items(b, None)));
                        }
                        sv_parser::CaseGenerateItem::Default(d) => {
                            let b = RefNode::from(&d.nodes.2);
                            labels.push(self.block_label(b.clone()));
                            branches.push((None, self.items(b, None)));
                        }
                    }
                }
                // the default branch goes last, whatever its place in the source
                if let Some(pos) = branches.iter().position(|b| b.0.is_none()) {
                    let d = branches.remove(pos);
                    let l = labels.remove(pos);
                    branches.push(d);
                    labels.push(l);
                }
                self.push(
                    out,
                    c,
                    ItemKind::GenerateIf(GenerateIf { branches, labels }),
                );
                Walk::Skip
            }
            RefNode::InitialConstruct(_) => self.ignored(out, c, "initial"),
            RefNode::FinalConstruct(_) => self.ignored(out, c, "final"),
            RefNode::ConcurrentAssertionItem(_)
            | RefNode::DeferredImmediateAssertionItem(_)
            | RefNode::AssertionItem(_) => self.ignored(out, c, "assertion"),
            RefNode::ClockingDeclaration(_) => self.ignored(out, c, "clocking"),
            RefNode::PropertyDeclaration(_) | RefNode::SequenceDeclaration(_) => {
                self.ignored(out, c, "property")
            }
            RefNode::CovergroupDeclaration(_) => self.ignored(out, c, "covergroup"),
            RefNode::FunctionDeclaration(_) => match self.function(c.clone()) {
                Some(f) => {
                    self.push(out, c, ItemKind::Function(f));
                    Walk::Skip
                }
                None => self.ignored(out, c, "subroutine"),
            },
            RefNode::TaskDeclaration(_) => self.ignored(out, c, "subroutine"),
            RefNode::ElaborationSystemTask(_) => self.ignored(out, c, "elaboration task"),
            RefNode::ModuleDeclarationAnsi(_) | RefNode::ModuleDeclarationNonansi(_) => {
                self.ignored(out, c, "nested module")
            }
            _ => Walk::Descend,
        }
    }

    fn ignored(&self, out: &mut Vec<Item>, c: RefNode<'a>, what: &str) -> Walk {
        self.push(out, c, ItemKind::Ignored { what: what.into() });
        Walk::Skip
    }

    fn block_label(&self, b: RefNode<'a>) -> Option<String> {
        match b {
            RefNode::GenerateBlock(sv_parser::GenerateBlock::Multiple(m)) => m
                .nodes
                .0
                .as_ref()
                .map(|(id, _)| self.str(RefNode::from(id)).to_string())
                .or_else(|| {
                    m.nodes
                        .2
                        .as_ref()
                        .map(|(_, id)| self.str(RefNode::from(id)).to_string())
                }),
            _ => None,
        }
    }

    fn instances(&self, c: RefNode<'a>) -> Vec<Instance> {
        let RefNode::ModuleInstantiation(mi) = c else {
            return vec![];
        };
        let module = self.str(RefNode::from(&mi.nodes.0)).to_string();
        let mut params = Vec::new();
        if let Some(pva) = &mi.nodes.1 {
            walk(RefNode::from(pva), |x| match x {
                RefNode::OrderedParameterAssignment(o) => {
                    params.push(Connection {
                        port: None,
                        expr: Some(self.expr(RefNode::from(&o.nodes.0))),
                        span: self.span_of(x.clone()),
                    });
                    Walk::Skip
                }
                RefNode::NamedParameterAssignment(np) => {
                    params.push(Connection {
                        port: Some(self.str(RefNode::from(&np.nodes.1)).to_string()),
                        expr: np
                            .nodes
                            .2
                            .nodes
                            .1
                            .as_ref()
                            .map(|e| self.expr(RefNode::from(e))),
                        span: self.span_of(x.clone()),
                    });
                    Walk::Skip
                }
                _ => Walk::Descend,
            });
        }
        let mut out = Vec::new();
        for hi in mi.nodes.2.contents() {
            let name_node = RefNode::from(&hi.nodes.0.nodes.0);
            let array = hi
                .nodes
                .0
                .nodes
                .1
                .iter()
                .flat_map(|u| self.ranges(RefNode::from(u)))
                .collect();
            let mut conns = Vec::new();
            let mut wildcard = false;
            walk(RefNode::from(hi), |x| match x {
                RefNode::OrderedPortConnection(o) => {
                    conns.push(Connection {
                        port: None,
                        expr: o.nodes.1.as_ref().map(|e| self.expr(RefNode::from(e))),
                        span: self.span_of(x.clone()),
                    });
                    Walk::Skip
                }
                RefNode::NamedPortConnectionIdentifier(np) => {
                    let port = self.str(RefNode::from(&np.nodes.2)).to_string();
                    let expr = match &np.nodes.3 {
                        // `.clk` alone connects to the same-named signal
                        None => Some(Expr::Ident {
                            name: port.clone(),
                            loc: Loc::default(),
                        }),
                        Some(p) => p.nodes.1.as_ref().map(|e| self.expr(RefNode::from(e))),
                    };
                    conns.push(Connection {
                        port: Some(port),
                        expr,
                        span: self.span_of(x.clone()),
                    });
                    Walk::Skip
                }
                RefNode::NamedPortConnectionAsterisk(_) => {
                    wildcard = true;
                    Walk::Skip
                }
                _ => Walk::Descend,
            });
            out.push(Instance {
                module: module.clone(),
                name: self.str(name_node.clone()).to_string(),
                array,
                params: params.clone(),
                connections: conns,
                wildcard,
                name_span: self.span_of(name_node),
            });
        }
        out
    }

    // ------------------------------------------------------------ processes

    fn process(&self, c: RefNode<'a>) -> Process {
        let RefNode::AlwaysConstruct(ac) = c.clone() else {
            unreachable!()
        };
        let kind = match &ac.nodes.0 {
            AlwaysKeyword::Always(_) => ProcessKind::Always,
            AlwaysKeyword::AlwaysComb(_) => ProcessKind::AlwaysComb,
            AlwaysKeyword::AlwaysLatch(_) => ProcessKind::AlwaysLatch,
            AlwaysKeyword::AlwaysFf(_) => ProcessKind::AlwaysFf,
        };
        let mut p = Process {
            kind,
            events: vec![],
            clock: None,
            async_controls: vec![],
            assigns: vec![],
            locals: vec![],
            span: self.span_of(c.clone()),
        };
        let mut body: Option<&'a StatementOrNull> = None;
        let stmt: &'a Statement = &ac.nodes.1;
        let mut direct: Option<&'a Statement> = Some(stmt);
        if let StatementItem::ProceduralTimingControlStatement(ptc) = &stmt.nodes.2 {
            let ctl = RefNode::from(&ptc.nodes.0);
            let text = self.str(ctl.clone());
            let base = self.range(ctl).map(|r| r.0).unwrap_or(0);
            p.events = self.events(text, base);
            body = Some(&ptc.nodes.1);
            direct = None;
        }
        let edges: Vec<&Event> = p.events.iter().filter(|e| e.edge != Edge::Any).collect();
        let mut ctx = Ctx::default();
        let mut out = Vec::new();
        let first_if = body.and_then(|b| leading_if(b));
        if edges.len() >= 2 {
            if let Some(cs) = first_if {
                // async controls: leading if / else-if tests of event signals, matching polarity
                let conds = if_conditions(cs);
                let mut n_async = 0;
                for cond in conds {
                    let e = self.expr(RefNode::from(cond));
                    match polarity_test(&e) {
                        Some((sig, high)) => {
                            let m = edges.iter().find(|ev| {
                                ev.signal.base_name() == Some(sig.as_str())
                                    && ((ev.edge == Edge::Posedge) == high)
                            });
                            if let Some(ev) = m {
                                if p.async_controls
                                    .iter()
                                    .any(|a| a.signal.base_name() == ev.signal.base_name())
                                {
                                    break;
                                }
                                p.async_controls.push(AsyncControl {
                                    signal: ev.signal.clone(),
                                    active_high: high,
                                });
                                n_async += 1;
                                continue;
                            }
                            break;
                        }
                        None => break,
                    }
                }
                let controls: Vec<&str> = p
                    .async_controls
                    .iter()
                    .filter_map(|a| a.signal.base_name())
                    .collect();
                p.clock = edges
                    .iter()
                    .find(|e| !controls.contains(&e.signal.base_name().unwrap_or("")))
                    .map(|e| (*e).clone());
                // statements before the leading if (rare) and the if itself
                if let Some(b) = body {
                    self.stmt_or_null_with_if(b, cs, n_async, &mut ctx, &mut out, &mut p.locals);
                }
            } else {
                p.clock = edges.first().map(|e| (*e).clone());
                if let Some(b) = body {
                    self.stmt_or_null(b, &mut ctx, &mut out, &mut p.locals);
                }
            }
        } else {
            p.clock = edges.first().map(|e| (*e).clone());
            if let Some(b) = body {
                self.stmt_or_null(b, &mut ctx, &mut out, &mut p.locals);
            }
        }
        if let Some(s) = direct {
            self.stmt(s, &mut ctx, &mut out, &mut p.locals);
        }
        p.assigns = out;
        p
    }

    fn events(&self, text: &str, base: usize) -> Vec<Event> {
        // text is `@(...)`, `@*`, `@(*)` or `@name`
        let t = text.trim_start_matches('@');
        let off = text.len() - t.len();
        let inner_start = t.find('(').map(|i| i + 1).unwrap_or(0);
        let inner_end = t.rfind(')').unwrap_or(t.len());
        if inner_end < inner_start {
            return vec![];
        }
        let inner = &t[inner_start..inner_end];
        if inner.trim() == "*" || t.trim() == "*" {
            return vec![];
        }
        let inner_base = base + off + inner_start;
        let mut out = Vec::new();
        let mut depth = 0i32;
        let mut start = 0;
        let b = inner.as_bytes();
        let mut terms = Vec::new();
        let mut i = 0;
        while i < b.len() {
            match b[i] {
                b'(' | b'[' | b'{' => depth += 1,
                b')' | b']' | b'}' => depth -= 1,
                b',' if depth == 0 => {
                    terms.push((start, i));
                    start = i + 1;
                }
                b'o' if depth == 0
                    && inner[i..].starts_with("or")
                    && (i == 0 || !is_ident_byte(b[i - 1]))
                    && !b.get(i + 2).is_some_and(|c| is_ident_byte(*c)) =>
                {
                    terms.push((start, i));
                    start = i + 2;
                    i += 1;
                }
                _ => {}
            }
            i += 1;
        }
        terms.push((start, b.len()));
        for (s, e) in terms {
            let term = &inner[s..e];
            let trimmed = term.trim_start();
            let lead = term.len() - trimmed.len();
            let (edge, rest, skip) = if let Some(r) = trimmed.strip_prefix("posedge") {
                (Edge::Posedge, r, 7)
            } else if let Some(r) = trimmed.strip_prefix("negedge") {
                (Edge::Negedge, r, 7)
            } else if let Some(r) = trimmed.strip_prefix("edge") {
                (Edge::Any, r, 4)
            } else {
                (Edge::Any, trimmed, 0)
            };
            if rest.trim().is_empty() {
                continue;
            }
            let signal = self.expr_text(rest, inner_base + s + lead + skip);
            out.push(Event { edge, signal });
        }
        out
    }

    fn stmt_or_null(
        &self,
        s: &'a StatementOrNull,
        ctx: &mut Ctx,
        out: &mut Vec<Assignment>,
        locals: &mut Vec<String>,
    ) {
        if let StatementOrNull::Statement(st) = s {
            self.stmt(st, ctx, out, locals);
        }
    }

    /// Walk a process body whose leading if has `n_async` async-control branches.
    fn stmt_or_null_with_if(
        &self,
        s: &'a StatementOrNull,
        target: &'a ConditionalStatement,
        n_async: usize,
        ctx: &mut Ctx,
        out: &mut Vec<Assignment>,
        locals: &mut Vec<String>,
    ) {
        let StatementOrNull::Statement(st) = s else {
            return;
        };
        match &st.nodes.2 {
            StatementItem::ConditionalStatement(cs) if std::ptr::eq(&**cs, target) => {
                self.conditional(cs, n_async, ctx, out, locals)
            }
            StatementItem::SeqBlock(sb) => {
                self.block_locals(RefNode::from(&**sb), locals);
                for s in &sb.nodes.3 {
                    self.stmt_or_null_with_if(s, target, n_async, ctx, out, locals);
                }
            }
            _ => self.stmt(st, ctx, out, locals),
        }
    }

    fn block_locals(&self, sb: RefNode<'a>, locals: &mut Vec<String>) {
        if let RefNode::SeqBlock(b) = sb {
            for d in &b.nodes.2 {
                for v in find_all(RefNode::from(d), |x| {
                    matches!(x, RefNode::VariableIdentifier(_)).then(|| x.clone())
                }) {
                    locals.push(self.str(v).to_string());
                }
            }
        }
    }

    fn stmt(
        &self,
        st: &'a Statement,
        ctx: &mut Ctx,
        out: &mut Vec<Assignment>,
        locals: &mut Vec<String>,
    ) {
        let span_node = RefNode::from(st);
        match &st.nodes.2 {
            StatementItem::NonblockingAssignment(b) => {
                let a = &b.0;
                out.push(self.assignment(
                    RefNode::from(&a.nodes.0),
                    self.expr(RefNode::from(&a.nodes.3)),
                    false,
                    ctx,
                    span_node,
                ));
            }
            StatementItem::BlockingAssignment(b) => match &b.0 {
                BlockingAssignment::Variable(v) => {
                    out.push(self.assignment(
                        RefNode::from(&v.nodes.0),
                        self.expr(RefNode::from(&v.nodes.3)),
                        true,
                        ctx,
                        span_node,
                    ));
                }
                BlockingAssignment::OperatorAssignment(o) => {
                    let op = self.str(RefNode::from(&o.nodes.1));
                    let rhs = self.expr(RefNode::from(&o.nodes.2));
                    let lhs_node = RefNode::from(&o.nodes.0);
                    let rhs = if op == "=" {
                        rhs
                    } else {
                        Expr::Binary {
                            op: op.trim_end_matches('=').to_string(),
                            lhs: Box::new(self.expr(lhs_node.clone())),
                            rhs: Box::new(rhs),
                        }
                    };
                    out.push(self.assignment(lhs_node, rhs, true, ctx, span_node));
                }
                _ => {}
            },
            StatementItem::IncOrDecExpression(b) => {
                let (target, rhs) = self.inc_dec(RefNode::from(&b.0));
                out.push(Assignment {
                    target,
                    rhs,
                    guards: ctx.guards.clone(),
                    in_reset: ctx.in_reset,
                    blocking: true,
                    in_loop: ctx.in_loop,
                    span: self.span_of(span_node),
                });
            }
            StatementItem::ConditionalStatement(cs) => self.conditional(cs, 0, ctx, out, locals),
            StatementItem::CaseStatement(cs) => self.case(cs, ctx, out, locals),
            StatementItem::SeqBlock(sb) => {
                self.block_locals(RefNode::from(&**sb), locals);
                for s in &sb.nodes.3 {
                    self.stmt_or_null(s, ctx, out, locals);
                }
            }
            StatementItem::ProceduralTimingControlStatement(p) => {
                self.stmt_or_null(&p.nodes.1, ctx, out, locals)
            }
            StatementItem::LoopStatement(l) => {
                let mut inner = ctx.clone();
                inner.in_loop = true;
                // the loop body is the first statement under the loop node
                let bodies = find_all(RefNode::from(&**l), |x| match x {
                    RefNode::Statement(s) => Some(*s),
                    _ => None,
                });
                for b in bodies {
                    self.stmt(b, &mut inner, out, locals);
                }
            }
            _ => {}
        }
    }

    /// `x++` / `++x` / `x--` as (target, `x + 1` or `x - 1`).
    fn inc_dec(&self, node: RefNode<'a>) -> (Expr, Expr) {
        let text = self.str(node.clone());
        let name = text.trim_matches(|c| c == '+' || c == '-' || c == ' ');
        let op = if text.contains("++") { "+" } else { "-" };
        let base = self.range(node).map(|r| r.0).unwrap_or(0);
        let off = text.find(name).unwrap_or(0);
        let target = self.expr_text(name, base + off);
        let rhs = Expr::Binary {
            op: op.into(),
            lhs: Box::new(target.clone()),
            rhs: Box::new(Expr::Const {
                text: "1".into(),
                value: Some(1),
                width: None,
            }),
        };
        (target, rhs)
    }

    fn assignment(
        &self,
        lhs: RefNode<'a>,
        rhs: Expr,
        blocking: bool,
        ctx: &Ctx,
        span: RefNode<'a>,
    ) -> Assignment {
        Assignment {
            target: self.expr(lhs),
            rhs,
            guards: ctx.guards.clone(),
            in_reset: ctx.in_reset,
            blocking,
            in_loop: ctx.in_loop,
            span: self.span_of(span),
        }
    }

    fn conditional(
        &self,
        cs: &'a ConditionalStatement,
        n_async: usize,
        ctx: &mut Ctx,
        out: &mut Vec<Assignment>,
        locals: &mut Vec<String>,
    ) {
        let mut branches: Vec<(&'a sv_parser::CondPredicate, &'a StatementOrNull)> =
            vec![(&cs.nodes.2.nodes.1, &cs.nodes.3)];
        for (_, _, p, s) in &cs.nodes.4 {
            branches.push((&p.nodes.1, s));
        }
        let mut negated: Vec<Guard> = Vec::new();
        for (i, (pred, body)) in branches.iter().enumerate() {
            let cond = self.expr(RefNode::from(*pred));
            let mut inner = ctx.clone();
            if i < n_async {
                inner.in_reset = true;
                self.stmt_or_null(body, &mut inner, out, locals);
                continue;
            }
            inner.guards.extend(negated.iter().cloned());
            inner.guards.push(Guard {
                cond: cond.clone(),
                polarity: true,
            });
            self.stmt_or_null(body, &mut inner, out, locals);
            negated.push(Guard {
                cond,
                polarity: false,
            });
        }
        if let Some((_, s)) = &cs.nodes.5 {
            let mut inner = ctx.clone();
            inner.guards.extend(negated);
            self.stmt_or_null(s, &mut inner, out, locals);
        }
    }

    fn case(
        &self,
        cs: &'a CaseStatement,
        ctx: &mut Ctx,
        out: &mut Vec<Assignment>,
        locals: &mut Vec<String>,
    ) {
        match cs {
            CaseStatement::Normal(n) => {
                let sel = self.expr(RefNode::from(&n.nodes.2.nodes.1));
                let mut items = vec![&n.nodes.3];
                items.extend(n.nodes.4.iter());
                let mut all_conds: Vec<Expr> = Vec::new();
                let mut default: Option<&'a StatementOrNull> = None;
                for it in items {
                    match it {
                        CaseItem::NonDefault(nd) => {
                            let mut cond: Option<Expr> = None;
                            for e in nd.nodes.0.contents() {
                                let eq = Expr::Binary {
                                    op: "==".into(),
                                    lhs: Box::new(sel.clone()),
                                    rhs: Box::new(self.expr(RefNode::from(e))),
                                };
                                cond = Some(match cond {
                                    None => eq,
                                    Some(p) => Expr::Binary {
                                        op: "||".into(),
                                        lhs: Box::new(p),
                                        rhs: Box::new(eq),
                                    },
                                });
                            }
                            let cond = cond.unwrap_or_else(|| sel.clone());
                            let mut inner = ctx.clone();
                            inner.guards.push(Guard {
                                cond: cond.clone(),
                                polarity: true,
                            });
                            self.stmt_or_null(&nd.nodes.2, &mut inner, out, locals);
                            all_conds.push(cond);
                        }
                        CaseItem::Default(d) => default = Some(&d.nodes.2),
                    }
                }
                if let Some(d) = default {
                    let mut inner = ctx.clone();
                    for c in all_conds {
                        inner.guards.push(Guard {
                            cond: c,
                            polarity: false,
                        });
                    }
                    self.stmt_or_null(d, &mut inner, out, locals);
                }
            }
            other => {
                // case-inside / case-matches: bodies under an opaque guard on the selector
                let node = RefNode::from(other);
                let guard = opaque(self.str(node.clone()).split(')').next().unwrap_or(""));
                let mut inner = ctx.clone();
                inner.guards.push(Guard {
                    cond: guard,
                    polarity: true,
                });
                for s in find_all(node, |x| match x {
                    RefNode::StatementOrNull(s) => Some(*s),
                    _ => None,
                }) {
                    self.stmt_or_null(s, &mut inner, out, locals);
                }
            }
        }
    }
}

fn is_ident_byte(c: u8) -> bool {
    c.is_ascii_alphanumeric() || c == b'_' || c == b'$'
}

fn has_word(text: &str, w: &str) -> bool {
    text.split(|c: char| !(c.is_alphanumeric() || c == '_'))
        .any(|t| t == w)
}

/// The first statement of a body if it is an if (through begin/end with one statement).
fn leading_if(b: &StatementOrNull) -> Option<&ConditionalStatement> {
    let StatementOrNull::Statement(st) = b else {
        return None;
    };
    match &st.nodes.2 {
        StatementItem::ConditionalStatement(cs) => Some(cs),
        StatementItem::SeqBlock(sb) => {
            let stmts: Vec<&StatementOrNull> = sb
                .nodes
                .3
                .iter()
                .filter(|s| matches!(s, StatementOrNull::Statement(_)))
                .collect();
            if stmts.len() == 1 {
                leading_if(stmts[0])
            } else {
                None
            }
        }
        _ => None,
    }
}

fn if_conditions(cs: &ConditionalStatement) -> Vec<&sv_parser::CondPredicate> {
    let mut v = vec![&cs.nodes.2.nodes.1];
    for (_, _, p, _) in &cs.nodes.4 {
        v.push(&p.nodes.1);
    }
    v
}

/// `x` → (x, high); `!x`, `~x`, `x == 0` → (x, low); `x == 1`, `x != 0` → (x, high).
pub fn polarity_test(e: &Expr) -> Option<(String, bool)> {
    match e {
        Expr::Ident { name, .. } => Some((name.clone(), true)),
        Expr::Unary { op, arg } if op == "!" || op == "~" => {
            polarity_test(arg).map(|(n, h)| (n, !h))
        }
        Expr::Binary { op, lhs, rhs } if op == "==" || op == "!=" || op == "===" || op == "!==" => {
            let Expr::Ident { name, .. } = &**lhs else {
                return None;
            };
            let Expr::Const { value: Some(v), .. } = &**rhs else {
                return None;
            };
            let eq = op.starts_with('=');
            let high = (*v != 0) == eq;
            Some((name.clone(), high))
        }
        _ => None,
    }
}
