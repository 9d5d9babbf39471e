//! Function declarations → [`Function`]: arguments, locals and the body as statements in
//! order, so the design layer can run a function where it needs a value (a gray-code encoder
//! written as a function, for instance). What the statement IR cannot hold becomes
//! `Stmt::Unsupported`: running it gives up, nothing is guessed.

use sv_parser::{
    BlockItemDeclaration, BlockingAssignment, CaseItem, CaseStatement, ConditionalStatement,
    DataDeclaration, ForInitialization, ForStepAssignment, FunctionBodyDeclaration,
    FunctionStatementOrNull, JumpStatement, LoopStatement, RefNode, Statement, StatementItem,
    StatementOrNull, TfItemDeclaration, TfPortDirection, VariableDeclAssignment,
};

use super::{find_all, find_first, Extractor};
use crate::model::*;

/// Width of an integer atom type (IEEE 1800-2017 6.11, Table 6-8).
fn atom_width(text: &str) -> Option<u32> {
    let first = text.split_whitespace().next()?;
    Some(match first {
        "byte" => 8,
        "shortint" => 16,
        "int" | "integer" => 32,
        "longint" | "time" => 64,
        _ => return None,
    })
}

impl<'a> Extractor<'a> {
    /// A variable named `name` whose type is given by the node `ty` (a data type, a port item
    /// or a declaration: only its packed dimensions and atom type are read).
    fn func_var(&self, ty: RefNode<'a>, name: String) -> FuncVar {
        let atom = find_first(ty.clone(), |c| {
            matches!(c, RefNode::IntegerAtomType(_)).then(|| self.str(c.clone()))
        })
        .and_then(atom_width);
        FuncVar {
            name,
            packed: self.packed_dims(ty.clone()),
            atom,
            other_type: atom.is_none() && self.type_name(ty).is_some(),
        }
    }

    pub(super) fn function(&self, n: RefNode<'a>) -> Option<Function> {
        let RefNode::FunctionDeclaration(fd) = n else {
            return None;
        };
        let mut args = Vec::new();
        let mut locals = Vec::new();
        let mut body = Vec::new();
        let mut has_outputs = false;
        let (name, ret) = match &fd.nodes.2 {
            FunctionBodyDeclaration::WithoutPort(b) => {
                let name = self.str(RefNode::from(&b.nodes.2)).to_string();
                let ret = self.func_var(RefNode::from(&b.nodes.0), name.clone());
                for it in &b.nodes.4 {
                    match it {
                        TfItemDeclaration::TfPortDeclaration(p) => {
                            has_outputs |= !self.is_input(Some(&p.nodes.1));
                            for id in find_all(RefNode::from(&p.nodes.4), |c| {
                                matches!(c, RefNode::PortIdentifier(_)).then(|| c.clone())
                            }) {
                                let v =
                                    self.func_var(RefNode::from(&**p), self.str(id).to_string());
                                args.push(v);
                            }
                        }
                        TfItemDeclaration::BlockItemDeclaration(d) => {
                            self.block_decl(d, &mut locals, &mut body)
                        }
                    }
                }
                self.fstmts(&b.nodes.5, &mut locals, &mut body);
                (name, ret)
            }
            FunctionBodyDeclaration::WithPort(b) => {
                let name = self.str(RefNode::from(&b.nodes.2)).to_string();
                let ret = self.func_var(RefNode::from(&b.nodes.0), name.clone());
                if let Some(list) = &b.nodes.3.nodes.1 {
                    let mut prev: Option<FuncVar> = None;
                    for item in list.nodes.0.contents() {
                        let Some((id, _, _)) = &item.nodes.4 else {
                            continue;
                        };
                        has_outputs |= !self.is_input(item.nodes.1.as_ref());
                        let pname = self.str(RefNode::from(id)).to_string();
                        let ty_text = self.str(RefNode::from(&item.nodes.3));
                        // `input logic [3:0] a, b`: b repeats a's type
                        let v = match &prev {
                            Some(p) if item.nodes.1.is_none() && ty_text.is_empty() => FuncVar {
                                name: pname,
                                ..p.clone()
                            },
                            _ => self.func_var(RefNode::from(&item.nodes.3), pname),
                        };
                        prev = Some(v.clone());
                        args.push(v);
                    }
                }
                for d in &b.nodes.5 {
                    self.block_decl(d, &mut locals, &mut body);
                }
                self.fstmts(&b.nodes.6, &mut locals, &mut body);
                (name, ret)
            }
        };
        Some(Function {
            name,
            ret,
            args,
            locals,
            body,
            has_outputs,
        })
    }

    fn is_input(&self, d: Option<&TfPortDirection>) -> bool {
        match d {
            None => true,
            Some(d) => self.str(RefNode::from(d)) == "input",
        }
    }

    /// A declaration in a function or block: its variables become locals, initialisers
    /// assignments at that point.
    fn block_decl(
        &self,
        d: &'a BlockItemDeclaration,
        locals: &mut Vec<FuncVar>,
        body: &mut Vec<Stmt>,
    ) {
        let BlockItemDeclaration::Data(dd) = d else {
            body.push(Stmt::Unsupported {
                what: "a parameter or let declaration in a function".into(),
            });
            return;
        };
        if !matches!(dd.nodes.1, DataDeclaration::Variable(_)) {
            return; // typedef, import
        }
        let node = RefNode::from(&dd.nodes.1);
        for vd in find_all(node.clone(), |c| match c {
            RefNode::VariableDeclAssignment(VariableDeclAssignment::Variable(a)) => Some(&**a),
            _ => None,
        }) {
            let name = self.str(RefNode::from(&vd.nodes.0)).to_string();
            if !vd.nodes.1.is_empty() {
                body.push(Stmt::Unsupported {
                    what: format!("local array `{name}`"),
                });
            }
            locals.push(self.func_var(node.clone(), name.clone()));
            if let Some((_, init)) = &vd.nodes.2 {
                body.push(Stmt::Assign {
                    target: Expr::Ident {
                        name,
                        loc: Loc::default(),
                    },
                    rhs: self.expr(RefNode::from(init)),
                });
            }
        }
    }

    fn fstmts(
        &self,
        list: &'a [FunctionStatementOrNull],
        locals: &mut Vec<FuncVar>,
        out: &mut Vec<Stmt>,
    ) {
        for s in list {
            if let FunctionStatementOrNull::Statement(fs) = s {
                self.fstmt(&fs.nodes.0, locals, out);
            }
        }
    }

    fn fstmt_or_null(&self, s: &'a StatementOrNull, locals: &mut Vec<FuncVar>) -> Vec<Stmt> {
        let mut out = Vec::new();
        if let StatementOrNull::Statement(st) = s {
            self.fstmt(st, locals, &mut out);
        }
        out
    }

    fn fstmt(&self, st: &'a Statement, locals: &mut Vec<FuncVar>, out: &mut Vec<Stmt>) {
        let unsupported = |what: &str| Stmt::Unsupported { what: what.into() };
        match &st.nodes.2 {
            StatementItem::BlockingAssignment(b) => match &b.0 {
                BlockingAssignment::Variable(v) => out.push(Stmt::Assign {
                    target: self.expr(RefNode::from(&v.nodes.0)),
                    rhs: self.expr(RefNode::from(&v.nodes.3)),
                }),
                BlockingAssignment::OperatorAssignment(o) => out.push(self.operator_assign(o)),
                _ => out.push(unsupported("an assignment to a pattern")),
            },
            StatementItem::IncOrDecExpression(b) => {
                let (target, rhs) = self.inc_dec(RefNode::from(&b.0));
                out.push(Stmt::Assign { target, rhs });
            }
            StatementItem::ConditionalStatement(cs) => out.push(self.fif(cs, locals)),
            StatementItem::CaseStatement(cs) => out.push(self.fcase(cs, locals)),
            StatementItem::SeqBlock(sb) => {
                for d in &sb.nodes.2 {
                    self.block_decl(d, locals, out);
                }
                for s in &sb.nodes.3 {
                    out.extend(self.fstmt_or_null(s, locals));
                }
            }
            StatementItem::LoopStatement(l) => match &**l {
                LoopStatement::For(f) => {
                    let (init, _, cond, _, step) = &f.nodes.1.nodes.1;
                    let mut init_s = Vec::new();
                    match init {
                        Some(ForInitialization::ListOfVariableAssignments(l)) => {
                            for a in l.nodes.0.contents() {
                                init_s.push(Stmt::Assign {
                                    target: self.expr(RefNode::from(&a.nodes.0)),
                                    rhs: self.expr(RefNode::from(&a.nodes.2)),
                                });
                            }
                        }
                        Some(ForInitialization::Declaration(d)) => {
                            for vd in d.nodes.0.contents() {
                                for (id, _, e) in vd.nodes.2.contents() {
                                    let name = self.str(RefNode::from(id)).to_string();
                                    locals.push(
                                        self.func_var(RefNode::from(&vd.nodes.1), name.clone()),
                                    );
                                    init_s.push(Stmt::Assign {
                                        target: Expr::Ident {
                                            name,
                                            loc: Loc::default(),
                                        },
                                        rhs: self.expr(RefNode::from(e)),
                                    });
                                }
                            }
                        }
                        None => {}
                    }
                    let mut step_s = Vec::new();
                    for s in step.iter().flat_map(|s| s.nodes.0.contents()) {
                        step_s.push(match s {
                            ForStepAssignment::OperatorAssignment(o) => self.operator_assign(o),
                            ForStepAssignment::IncOrDecExpression(i) => {
                                let (target, rhs) = self.inc_dec(RefNode::from(&**i));
                                Stmt::Assign { target, rhs }
                            }
                            ForStepAssignment::FunctionSubroutineCall(_) => {
                                unsupported("a call as a loop step")
                            }
                        });
                    }
                    let Some(cond) = cond else {
                        out.push(unsupported("a loop without a condition"));
                        return;
                    };
                    let body = self.fstmt_or_null(&f.nodes.2, locals);
                    out.push(Stmt::For {
                        init: init_s,
                        cond: self.expr(RefNode::from(cond)),
                        step: step_s,
                        body,
                    });
                }
                _ => out.push(unsupported("a loop other than `for`")),
            },
            StatementItem::JumpStatement(j) => match &**j {
                JumpStatement::Return(r) => out.push(Stmt::Return {
                    value: r.nodes.1.as_ref().map(|e| self.expr(RefNode::from(e))),
                }),
                _ => out.push(unsupported("break or continue")),
            },
            // system tasks ($display, $error) change no value
            StatementItem::SubroutineCallStatement(c)
                if self.str(RefNode::from(&**c)).trim_start().starts_with('$') => {}
            _ => out.push(unsupported("a statement of another kind")),
        }
    }

    fn operator_assign(&self, o: &'a sv_parser::OperatorAssignment) -> Stmt {
        let op = self.str(RefNode::from(&o.nodes.1));
        let rhs = self.expr(RefNode::from(&o.nodes.2));
        let target = self.expr(RefNode::from(&o.nodes.0));
        let rhs = if op == "=" {
            rhs
        } else {
            Expr::Binary {
                op: op.trim_end_matches('=').to_string(),
                lhs: Box::new(target.clone()),
                rhs: Box::new(rhs),
            }
        };
        Stmt::Assign { target, rhs }
    }

    fn fif(&self, cs: &'a ConditionalStatement, locals: &mut Vec<FuncVar>) -> Stmt {
        let mut branches = vec![(&cs.nodes.2.nodes.1, &cs.nodes.3)];
        for (_, _, p, s) in &cs.nodes.4 {
            branches.push((&p.nodes.1, s));
        }
        let mut other = match &cs.nodes.5 {
            Some((_, s)) => self.fstmt_or_null(s, locals),
            None => Vec::new(),
        };
        // else-if chains nest from the last branch outwards
        for (pred, body) in branches.into_iter().rev() {
            let then = self.fstmt_or_null(body, locals);
            other = vec![Stmt::If {
                cond: self.expr(RefNode::from(pred)),
                then,
                other,
            }];
        }
        other.pop().unwrap_or(Stmt::Unsupported {
            what: "an empty if".into(),
        })
    }

    fn fcase(&self, cs: &'a CaseStatement, locals: &mut Vec<FuncVar>) -> Stmt {
        let CaseStatement::Normal(n) = cs else {
            return Stmt::Unsupported {
                what: "case inside / case matches".into(),
            };
        };
        if self.str(RefNode::from(&n.nodes.1)) != "case" {
            return Stmt::Unsupported {
                what: "casez / casex".into(),
            };
        }
        let sel = self.expr(RefNode::from(&n.nodes.2.nodes.1));
        let mut items = Vec::new();
        let mut default = Vec::new();
        for it in std::iter::once(&n.nodes.3).chain(n.nodes.4.iter()) {
            match it {
                CaseItem::NonDefault(nd) => {
                    let labels = nd
                        .nodes
                        .0
                        .contents()
                        .into_iter()
                        .map(|e| self.expr(RefNode::from(e)))
                        .collect();
                    items.push((labels, self.fstmt_or_null(&nd.nodes.2, locals)));
                }
                CaseItem::Default(d) => default = self.fstmt_or_null(&d.nodes.2, locals),
            }
        }
        Stmt::Case {
            sel,
            items,
            default,
        }
    }
}
