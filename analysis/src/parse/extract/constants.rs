//! Named constants outside the parameter lists: enumeration members, package contents and
//! `import` declarations. Real RTL compares state registers and mux selects against enum
//! members and package constants (`sel == lc_pkg::On`, `mem[pkg::PortA]`); kept opaque, a
//! pinned select or a constant index could not be followed.

use sv_parser::{DataTypeEnum, RefNode};

use super::{find_all, find_first, Extractor};
use crate::model::*;

impl<'a> Extractor<'a> {
    /// The members of every enumeration declared under `n`, as local parameters in source
    /// order. A member without a value is the previous one plus 1, the first 0 (IEEE
    /// 1800-2017 6.19). A member with a range (`A[3]`) names several constants: it and the
    /// members after it in that enumeration are left out rather than numbered wrongly.
    pub(super) fn enum_members(&self, n: RefNode<'a>) -> Vec<Param> {
        let mut out = Vec::new();
        for e in find_all(n, |c| match c {
            RefNode::DataTypeEnum(e) => Some(*e),
            _ => None,
        }) {
            self.one_enum(e, &mut out);
        }
        out
    }

    fn one_enum(&self, e: &'a DataTypeEnum, out: &mut Vec<Param>) {
        let mut prev: Option<String> = None;
        for m in e.nodes.2.nodes.1.contents() {
            let name = self.str(RefNode::from(&m.nodes.0)).to_string();
            if m.nodes.1.is_some() {
                return;
            }
            let default = match (&m.nodes.2, &prev) {
                (Some((_, v)), _) => self.expr(RefNode::from(v)),
                (None, None) => Expr::Const {
                    text: "0".into(),
                    value: Some(0),
                    width: None,
                },
                (None, Some(p)) => Expr::Binary {
                    op: "+".into(),
                    lhs: Box::new(Expr::Ident {
                        name: p.clone(),
                        loc: Loc::default(),
                    }),
                    rhs: Box::new(Expr::Const {
                        text: "1".into(),
                        value: Some(1),
                        width: None,
                    }),
                },
            };
            out.push(Param {
                name: name.clone(),
                local: true,
                default: Some(default),
                span: self.span_of(RefNode::from(m)),
            });
            prev = Some(name);
        }
    }

    /// `import p::*;` → `p::*`, `import p::x;` → `p::x`, for every import under `n`.
    pub(super) fn imports(&self, n: RefNode<'a>) -> Vec<String> {
        find_all(n, |c| match c {
            RefNode::PackageImportItem(_) => Some(self.str(c.clone()).replace(' ', "")),
            _ => None,
        })
    }

    /// A package: its parameters and enumeration members in source order, and its imports.
    pub(super) fn package(&self, n: RefNode<'a>) -> Package {
        let name = find_first(n.clone(), |c| {
            matches!(c, RefNode::PackageIdentifier(_)).then(|| self.str(c.clone()).to_string())
        })
        .unwrap_or_default();
        let mut params = self.params_in(n.clone(), true);
        params.extend(self.enum_members(n.clone()));
        params.sort_by_key(|p| p.span.start);
        Package {
            name,
            params,
            imports: self.imports(n.clone()),
            span: self.span_of(n),
        }
    }
}
