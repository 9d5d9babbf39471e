//! Package constants: every package's parameters and enumeration members, evaluated once in
//! compile order, and the names a module sees through `import` (IEEE 1800-2017 26.3). With
//! them a select such as `mode == lc_pkg::On` or an index `arr[pkg::PortA]` is a number the
//! rest of the analysis can follow.

use std::collections::{HashMap, HashSet};

use super::eval::{self, Env};
use crate::model::{FileModel, Item, ItemKind, Module};

#[derive(Default)]
pub struct PackageConsts {
    /// `pkg::NAME` → value, for every constant that evaluated.
    qualified: Env,
    /// Package → its constants in source order (for `import pkg::*`).
    members: HashMap<String, Vec<(String, i64)>>,
}

impl PackageConsts {
    pub fn new(files: &[FileModel]) -> Self {
        let mut pc = PackageConsts::default();
        for p in files.iter().flat_map(|f| &f.packages) {
            // evaluate in one env: the qualified names so far, plus this package's own and
            // imported names unqualified while it is evaluated (they never contain `::`)
            let mut unqualified: Vec<String> = Vec::new();
            for (name, v) in pc.imported(&p.imports) {
                pc.qualified.insert(name.clone(), v);
                unqualified.push(name);
            }
            let mut own = Vec::new();
            for prm in &p.params {
                let Some(v) = prm
                    .default
                    .as_ref()
                    .and_then(|d| eval::eval(d, &pc.qualified))
                else {
                    continue;
                };
                pc.qualified.insert(format!("{}::{}", p.name, prm.name), v);
                pc.qualified.insert(prm.name.clone(), v);
                unqualified.push(prm.name.clone());
                own.push((prm.name.clone(), v));
            }
            for n in unqualified {
                pc.qualified.remove(&n);
            }
            pc.members.insert(p.name.clone(), own);
        }
        pc
    }

    /// Value of a constant by its qualified name (`pkg::NAME`).
    pub fn get(&self, qualified: &str) -> Option<i64> {
        self.qualified.get(qualified).copied()
    }

    /// `(name, value)` of what the imports bring in, unqualified.
    fn imported(&self, imports: &[String]) -> Vec<(String, i64)> {
        let mut out = Vec::new();
        for i in imports {
            let Some((pkg, item)) = i.split_once("::") else {
                continue;
            };
            let Some(ms) = self.members.get(pkg) else {
                continue;
            };
            if item == "*" {
                out.extend(ms.iter().cloned());
            } else if let Some(m) = ms.iter().find(|(n, _)| n == item) {
                out.push(m.clone());
            }
        }
        out
    }

    /// The constants a module sees before its own parameters: every package constant by its
    /// qualified name, and the imported ones by their own name unless the module declares
    /// that name itself (a local declaration hides a wildcard import).
    pub fn base_env(&self, m: &Module) -> Env {
        let mut env = self.qualified.clone();
        if m.imports.is_empty() {
            return env;
        }
        let mut own: HashSet<&str> = m.ports.iter().map(|p| p.name.as_str()).collect();
        own.extend(m.params.iter().map(|p| p.name.as_str()));
        declared(&m.items, &mut own);
        for (name, v) in self.imported(&m.imports) {
            if !own.contains(name.as_str()) {
                env.insert(name, v);
            }
        }
        env
    }
}

/// Names declared by items, generate blocks included.
fn declared<'m>(items: &'m [Item], out: &mut HashSet<&'m str>) {
    for it in items {
        match &it.kind {
            ItemKind::Decl(d) => {
                out.insert(d.name.as_str());
            }
            ItemKind::PortDecl(p) => {
                out.insert(p.name.as_str());
            }
            ItemKind::GenerateFor(g) => {
                out.insert(g.genvar.as_str());
                declared(&g.items, out);
            }
            ItemKind::GenerateIf(g) => g.branches.iter().for_each(|(_, b)| declared(b, out)),
            _ => {}
        }
    }
}
