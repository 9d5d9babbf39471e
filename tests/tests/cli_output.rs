//! `seam check` output for people and CI, checked against references outside the code that
//! produces it:
//!
//! - JSON (`--format json`) against our published schema docs/schema/check-v1.json, validated by
//!   the `jsonschema` crate (an independent JSON Schema implementation);
//! - SARIF (`--format sarif`) against the OASIS SARIF 2.1.0 JSON Schema
//!   (tests/fixtures/schema/sarif-schema-2.1.0.json, copied from the serde-sarif 0.8.0 crate
//!   sources; see tests/fixtures/schema/README.md), validated by the `jsonschema` crate with
//!   format checks on, and cross-checked result by result against the JSON of the same design;
//! - the HTML report (`--report`) as rendered by headless Chromium (Debian package `chromium`,
//!   installed by tests/run): the DOM Chromium dumps must hold one node per domain and one edge
//!   per (source domain, destination domain, status) group, the counts taken from the JSON
//!   output of the same run;
//! - the command-line contract of docs/cli.md and issue 7: bad arguments, a missing path and a
//!   broken seam.toml give one line on stderr and exit 2, never a panic.

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use seam_analysis::config::RULES;
use seam_tests::{fixtures, repo_root, seam};
use serde_json::Value;

// ---------------------------------------------------------------------------------------------
// helpers
// ---------------------------------------------------------------------------------------------

fn demo() -> PathBuf {
    repo_root().join("tests").join("demo")
}

fn load_json(path: &Path) -> Value {
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

/// A validator for `schema` (the `jsonschema` crate picks the draft from `$schema`), with
/// `format` keywords checked too (uri, uri-reference...).
fn validator(schema: &Value) -> jsonschema::Validator {
    jsonschema::options()
        .should_validate_formats(true)
        .build(schema)
        .expect("schema compiles")
}

fn errors(v: &jsonschema::Validator, doc: &Value) -> Vec<String> {
    v.iter_errors(doc)
        .map(|e| format!("{} at {}", e, e.instance_path()))
        .collect()
}

fn check_schema() -> jsonschema::Validator {
    validator(&load_json(&repo_root().join("docs/schema/check-v1.json")))
}

/// The OASIS file's `language` pattern `^[a-zA-Z]{2}|^[a-zA-Z]{2}-[a-zA-Z]{2}]?$` has a lone
/// `]`, which ECMA-262 (the dialect JSON Schema patterns use, Annex B) reads as a literal `]`
/// but the jsonschema crate's draft-07 meta-schema check ("format": "regex") rejects. The file
/// stays as published; in memory that `]` is written `\]`, the same pattern, so the schema
/// compiles. Nothing else is touched, and every format (uri, uri-reference...) is checked.
const OASIS_LANGUAGE_PATTERN: &str = "^[a-zA-Z]{2}|^[a-zA-Z]{2}-[a-zA-Z]{2}]?$";

fn escape_lone_bracket(v: &mut Value) {
    match v {
        Value::Object(m) => {
            for (k, x) in m.iter_mut() {
                if k == "pattern" && x.as_str() == Some(OASIS_LANGUAGE_PATTERN) {
                    *x = Value::String("^[a-zA-Z]{2}|^[a-zA-Z]{2}-[a-zA-Z]{2}\\]?$".to_string());
                } else {
                    escape_lone_bracket(x);
                }
            }
        }
        Value::Array(a) => a.iter_mut().for_each(escape_lone_bracket),
        _ => {}
    }
}

fn sarif_schema() -> jsonschema::Validator {
    let mut schema = load_json(&fixtures().join("schema/sarif-schema-2.1.0.json"));
    assert_eq!(
        schema["title"],
        "Static Analysis Results Format (SARIF) Version 2.1.0 JSON Schema"
    );
    escape_lone_bracket(&mut schema);
    validator(&schema)
}

fn stdout_json(out: &Output, what: &str) -> Value {
    let code = out.status.code();
    assert!(
        matches!(code, Some(0) | Some(1)),
        "{what}: exit {code:?}\nstderr: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout)
        .unwrap_or_else(|e| panic!("{what}: stdout is not JSON: {e}"))
}

fn run_format(dir: &Path, format: &str) -> (Value, Option<i32>) {
    run_format_on(dir, ".", format)
}

fn run_format_on(dir: &Path, path: &str, format: &str) -> (Value, Option<i32>) {
    let out = seam(&["check", path, "--format", format], dir);
    let v = stdout_json(
        &out,
        &format!("{} [{path}] --format {format}", dir.display()),
    );
    (v, out.status.code())
}

/// Every design the tests ship, as (folder to run in, path argument): tests/demo, and each
/// folder under tests/fixtures that holds Verilog/SystemVerilog sources or a seam.toml (include
/// folders and the schema folder aside); a folder without a seam.toml is also checked one
/// source file at a time, since such folders hold one small design per file.
fn designs() -> Vec<(PathBuf, String)> {
    let mut out = vec![(demo(), ".".to_string())];
    for e in walkdir::WalkDir::new(fixtures())
        .sort_by_file_name()
        .into_iter()
        .filter_map(|e| e.ok())
    {
        if !e.file_type().is_dir() {
            continue;
        }
        let p = e.path();
        let name = p.file_name().and_then(|n| n.to_str()).unwrap_or("");
        if name == "include" || p.components().any(|c| c.as_os_str() == "schema") {
            continue;
        }
        let mut sources: Vec<String> = std::fs::read_dir(p)
            .map(|rd| {
                rd.filter_map(|x| x.ok())
                    .map(|x| x.path())
                    .filter(|q| {
                        q.is_file()
                            && matches!(
                                q.extension().and_then(|x| x.to_str()),
                                Some("v") | Some("sv")
                            )
                    })
                    .map(|q| q.file_name().unwrap().to_string_lossy().to_string())
                    .collect()
            })
            .unwrap_or_default();
        sources.sort();
        let has_config = p.join("seam.toml").is_file();
        if !has_config && sources.is_empty() {
            continue;
        }
        out.push((p.to_path_buf(), ".".to_string()));
        if !has_config && sources.len() > 1 {
            out.extend(sources.into_iter().map(|f| (p.to_path_buf(), f)));
        }
    }
    out
}

fn design_name(d: &(PathBuf, String)) -> String {
    format!("{} [{}]", d.0.display(), d.1)
}

fn broken_config(d: &(PathBuf, String)) -> bool {
    // A fixture whose seam.toml is broken on purpose is checked by the exit-2 tests instead.
    let out = seam(&["check", &d.1, "--format", "json"], &d.0);
    out.status.code() == Some(2)
}

/// One way to break a report, for the schema-strength tests.
type Mutation = Box<dyn Fn(&mut Value)>;

fn rule_ids() -> Vec<String> {
    RULES.iter().map(|(id, _)| id.to_string()).collect()
}

fn unwaived_errors(report: &Value) -> usize {
    report["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["severity"] == "error" && f["waived"] == false)
        .count()
}

// ---------------------------------------------------------------------------------------------
// JSON against docs/schema/check-v1.json
// ---------------------------------------------------------------------------------------------

/// Reference: docs/schema/check-v1.json, by the jsonschema crate; exit code per docs/cli.md.
#[test]
fn json_of_every_fixture_validates_against_the_published_schema() {
    let schema = check_schema();
    let mut checked = 0;
    for d in designs() {
        if broken_config(&d) {
            continue;
        }
        let (v, code) = run_format_on(&d.0, &d.1, "json");
        let errs = errors(&schema, &v);
        assert!(
            errs.is_empty(),
            "{}: JSON does not match docs/schema/check-v1.json:\n{}",
            design_name(&d),
            errs.join("\n")
        );
        // docs/cli.md: exit 1 exactly when an unwaived finding at error severity is left.
        let expect = if unwaived_errors(&v) > 0 { 1 } else { 0 };
        assert_eq!(
            code,
            Some(expect),
            "{}: exit code vs findings",
            design_name(&d)
        );
        checked += 1;
    }
    assert!(
        checked >= 2,
        "expected the demo and the fixtures, checked {checked}"
    );
}

/// The schema is not vacuous: each broken variant of a real report is rejected by it.
#[test]
fn the_json_schema_rejects_reports_that_break_it() {
    let schema = check_schema();
    let (good, _) = run_format(&demo(), "json");
    assert!(errors(&schema, &good).is_empty());
    let finding = serde_json::json!({
        "rule": "unsynchronized-crossing", "severity": "error", "file": "rtl/a.v", "line": 3,
        "column": 5, "end_line": 3, "end_column": 9, "message": "m", "signal": null,
        "source_domain": null, "destination_domain": null, "waived": false, "waiver_reason": null,
        "related": []
    });
    let mut with_finding = good.clone();
    with_finding["findings"]
        .as_array_mut()
        .unwrap()
        .push(finding.clone());
    assert!(
        errors(&schema, &with_finding).is_empty(),
        "a hand-made valid finding is accepted"
    );
    let mutants: Vec<(&str, Mutation)> = vec![
        (
            "version 2",
            Box::new(|v: &mut Value| v["version"] = 2.into()),
        ),
        (
            "no clocks",
            Box::new(|v: &mut Value| {
                v.as_object_mut().unwrap().remove("clocks");
            }),
        ),
        (
            "unknown top key",
            Box::new(|v: &mut Value| v["extra"] = 1.into()),
        ),
        (
            "finding without signal",
            Box::new(|v: &mut Value| {
                v["findings"]
                    .as_array_mut()
                    .unwrap()
                    .last_mut()
                    .unwrap()
                    .as_object_mut()
                    .unwrap()
                    .remove("signal");
            }),
        ),
        (
            "line 0",
            Box::new(|v: &mut Value| {
                v["findings"].as_array_mut().unwrap().last_mut().unwrap()["line"] = 0.into()
            }),
        ),
        (
            "unknown rule",
            Box::new(|v: &mut Value| {
                v["findings"].as_array_mut().unwrap().last_mut().unwrap()["rule"] =
                    "no-such-rule".into()
            }),
        ),
        (
            "bad severity",
            Box::new(|v: &mut Value| {
                v["findings"].as_array_mut().unwrap().last_mut().unwrap()["severity"] =
                    "fatal".into()
            }),
        ),
        (
            "bad crossing status",
            Box::new(|v: &mut Value| {
                v["crossings"].as_array_mut().unwrap().push(serde_json::json!({
                "source_domain": "a", "destination_domain": "b", "source": "x", "destination": "y",
                "status": "maybe", "scheme": null, "stages": null, "bits": 1, "file": "f.v",
                "line": 1, "column": 1, "end_line": 1, "end_column": 2
            }));
            }),
        ),
    ];
    for (what, m) in mutants {
        let mut v = with_finding.clone();
        m(&mut v);
        assert!(
            !errors(&schema, &v).is_empty(),
            "schema accepted a report with {what}"
        );
    }
}

/// The schema's rule enum is the analysis crate's rule table (config::RULES).
#[test]
fn the_json_schema_lists_exactly_the_rules() {
    let s = load_json(&repo_root().join("docs/schema/check-v1.json"));
    let listed: Vec<String> = s["$defs"]["rule"]["enum"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_str().unwrap().to_string())
        .collect();
    assert_eq!(listed, rule_ids());
}

// ---------------------------------------------------------------------------------------------
// SARIF against the OASIS schema
// ---------------------------------------------------------------------------------------------

/// `file:` URL of a path, percent-encoded per RFC 3986 (unreserved characters and `/` kept).
fn file_url(p: &Path) -> String {
    let enc: String = p
        .to_string_lossy()
        .bytes()
        .map(|b| match b {
            b'A'..=b'Z' | b'a'..=b'z' | b'0'..=b'9' | b'-' | b'.' | b'_' | b'~' | b'/' => {
                (b as char).to_string()
            }
            _ => format!("%{b:02X}"),
        })
        .collect();
    format!("file://{enc}")
}

/// The folder's `file:` URL with the trailing `/` a SARIF base URI needs (SARIF 2.1.0 §3.14.14).
fn file_uri_of(dir: &Path) -> String {
    file_url(&dir.canonicalize().unwrap()) + "/"
}

/// Reference: the OASIS SARIF 2.1.0 JSON Schema (tests/fixtures/schema, from serde-sarif 0.8.0),
/// by the jsonschema crate; the content is compared with the JSON report of the same design.
#[test]
fn sarif_of_every_fixture_validates_against_the_oasis_schema() {
    let schema = sarif_schema();
    let mut checked = 0;
    for d in designs() {
        if broken_config(&d) {
            continue;
        }
        let (dir, what) = (&d.0, design_name(&d));
        let (sarif, code_s) = run_format_on(dir, &d.1, "sarif");
        let errs = errors(&schema, &sarif);
        assert!(
            errs.is_empty(),
            "{what}: SARIF does not match the OASIS 2.1.0 schema:\n{}",
            errs.join("\n")
        );
        let (json, code_j) = run_format_on(dir, &d.1, "json");
        assert_eq!(code_s, code_j, "{what}: same exit code in both formats");
        assert_eq!(sarif["version"], "2.1.0");
        let runs = sarif["runs"].as_array().unwrap();
        assert_eq!(runs.len(), 1);
        let run = &runs[0];
        // SARIF 2.1.0 §3.14.17: columns in Unicode code points, as DESIGN.md section 2 says.
        assert_eq!(run["columnKind"], "unicodeCodePoints");
        // The workspace root: the folder of seam.toml, else the folder checked (or the file's).
        let root = std::iter::successors(Some(dir.as_path()), |p| p.parent())
            .find(|p| p.join("seam.toml").is_file())
            .unwrap_or(dir);
        assert_eq!(
            run["originalUriBaseIds"]["SRCROOT"]["uri"],
            file_uri_of(root),
            "{what}"
        );

        // One rule descriptor per rule id, each with help and a help URI to its page.
        let rules = run["tool"]["driver"]["rules"].as_array().unwrap();
        let ids: Vec<String> = rules
            .iter()
            .map(|r| r["id"].as_str().unwrap().to_string())
            .collect();
        assert_eq!(ids, rule_ids());
        for r in rules {
            let id = r["id"].as_str().unwrap();
            assert!(
                !r["help"]["text"].as_str().unwrap_or("").is_empty(),
                "{id}: help text"
            );
            assert!(
                !r["shortDescription"]["text"]
                    .as_str()
                    .unwrap_or("")
                    .is_empty(),
                "{id}: short description"
            );
            let uri = r["helpUri"].as_str().unwrap();
            assert!(uri.ends_with(&format!("/{id}.md")), "{id}: helpUri {uri}");
            let default = RULES.iter().find(|(x, _)| *x == id).unwrap().1;
            let level = match default.as_str() {
                "error" => "error",
                "warning" => "warning",
                "off" => "none",
                _ => "note",
            };
            assert_eq!(
                r["defaultConfiguration"]["level"], level,
                "{id}: default level"
            );
        }
        let help_of = |id: &str| {
            rules.iter().find(|r| r["id"] == id).unwrap()["help"]["text"]
                .as_str()
                .unwrap()
                .to_string()
        };
        // The cautions of the brief (DESIGN.md section 1) in the help of the CDC and MTBF rules.
        assert!(help_of("unsynchronized-crossing").contains("structural and advisory"));
        assert!(help_of("low-mtbf").contains("estimates"));

        // Results: one per JSON finding, same rule, level, place, related locations, waiver.
        let results = run["results"].as_array().unwrap();
        let findings = json["findings"].as_array().unwrap();
        assert_eq!(results.len(), findings.len(), "{what}: results vs findings");
        for (r, f) in results.iter().zip(findings) {
            assert_eq!(r["ruleId"], f["rule"]);
            let idx = r["ruleIndex"].as_u64().unwrap() as usize;
            assert_eq!(ids[idx], f["rule"].as_str().unwrap());
            let level = match f["severity"].as_str().unwrap() {
                "error" => "error",
                "warning" => "warning",
                _ => "note",
            };
            assert_eq!(r["level"], level);
            assert_eq!(r["message"]["text"], f["message"]);
            let loc = &r["locations"][0]["physicalLocation"];
            assert_eq!(loc["artifactLocation"]["uriBaseId"], "SRCROOT");
            let file = f["file"].as_str().unwrap();
            assert_eq!(
                loc["artifactLocation"]["uri"]
                    .as_str()
                    .unwrap()
                    .replace("%20", " "),
                file
            );
            assert_eq!(loc["region"]["startLine"], f["line"]);
            assert_eq!(loc["region"]["startColumn"], f["column"]);
            assert_eq!(loc["region"]["endLine"], f["end_line"]);
            assert_eq!(loc["region"]["endColumn"], f["end_column"]);
            let rel = f["related"].as_array().unwrap();
            let srel = r["relatedLocations"]
                .as_array()
                .map(|a| a.len())
                .unwrap_or(0);
            assert_eq!(srel, rel.len(), "related locations of {f}");
            for (sr, jr) in r["relatedLocations"]
                .as_array()
                .into_iter()
                .flatten()
                .zip(rel)
            {
                assert_eq!(sr["message"]["text"], jr["message"]);
                assert_eq!(sr["physicalLocation"]["region"]["startLine"], jr["line"]);
            }
            let sup = r["suppressions"].as_array().unwrap();
            assert_eq!(
                !sup.is_empty(),
                f["waived"] == true,
                "suppression iff waived: {f}"
            );
        }
        checked += 1;
    }
    assert!(checked >= 2);
}

/// The OASIS schema, as compiled here, is not vacuous: broken variants of our real SARIF log
/// are rejected, including a relative `helpUri` (the schema's "format": "uri" is checked).
#[test]
fn the_oasis_schema_rejects_broken_sarif() {
    let schema = sarif_schema();
    let (good, _) = run_format(&demo(), "sarif");
    assert!(errors(&schema, &good).is_empty());
    assert!(
        !good["runs"][0]["results"].as_array().unwrap().is_empty(),
        "the demo has results to break"
    );
    let mutants: Vec<(&str, Mutation)> = vec![
        (
            "version 2.0.0",
            Box::new(|v: &mut Value| v["version"] = "2.0.0".into()),
        ),
        (
            "columnKind bytes",
            Box::new(|v: &mut Value| v["runs"][0]["columnKind"] = "bytes".into()),
        ),
        (
            "level fatal",
            Box::new(|v: &mut Value| v["runs"][0]["results"][0]["level"] = "fatal".into()),
        ),
        (
            "startLine 0",
            Box::new(|v: &mut Value| {
                v["runs"][0]["results"][0]["locations"][0]["physicalLocation"]["region"]
                    ["startLine"] = 0.into()
            }),
        ),
        (
            "relative helpUri",
            Box::new(|v: &mut Value| {
                v["runs"][0]["tool"]["driver"]["rules"][0]["helpUri"] = "docs/rules/x.md".into()
            }),
        ),
        (
            "suppression kind",
            Box::new(|v: &mut Value| {
                v["runs"][0]["results"][0]["suppressions"] =
                    serde_json::json!([{"kind": "inComment"}])
            }),
        ),
        (
            "result without message",
            Box::new(|v: &mut Value| {
                v["runs"][0]["results"][0]
                    .as_object_mut()
                    .unwrap()
                    .remove("message");
            }),
        ),
    ];
    for (what, m) in mutants {
        let mut v = good.clone();
        m(&mut v);
        assert!(
            !errors(&schema, &v).is_empty(),
            "the OASIS schema accepted SARIF with {what}"
        );
    }
}

fn copy_dir(from: &Path, to: &Path) {
    for e in walkdir::WalkDir::new(from)
        .into_iter()
        .filter_map(|e| e.ok())
    {
        let rel = e.path().strip_prefix(from).unwrap();
        let dst = to.join(rel);
        if e.file_type().is_dir() {
            std::fs::create_dir_all(&dst).unwrap();
        } else {
            std::fs::copy(e.path(), &dst).unwrap();
        }
    }
}

/// Waivers (DESIGN.md section 4) become SARIF suppressions (SARIF 2.1.0 §3.34): `inSource` for
/// a `// seam: allow(rule)` comment, `external` for a seam.toml `[[waive]]` entry. The test
/// writes both waivers itself into a copy of the demo, on two findings the demo reports.
#[test]
fn waivers_become_inline_and_external_suppressions() {
    let d = tempfile::tempdir().unwrap();
    copy_dir(&demo(), d.path());
    let (before, _) = run_format(d.path(), "json");
    let cdc: Vec<&Value> = before["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| {
            f["waived"] == false
                && f["signal"].is_string()
                && f["file"].as_str().unwrap().starts_with("rtl/")
        })
        .collect();
    // The demo carries deliberate CDC bugs (tests/demo/seam.toml): at least two on distinct lines.
    let a = cdc.first().expect("the demo reports CDC findings");
    let b = cdc
        .iter()
        .find(|f| {
            (f["file"].clone(), f["line"].clone()) != (a["file"].clone(), a["line"].clone())
                && f["signal"]
                    .as_str()
                    .unwrap()
                    .chars()
                    .all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '.')
        })
        .expect("a second CDC finding on another line");
    let (a_rule, a_file, a_line) = (
        a["rule"].as_str().unwrap(),
        a["file"].as_str().unwrap(),
        a["line"].as_u64().unwrap() as usize,
    );
    let path = d.path().join(a_file);
    let text = std::fs::read_to_string(&path).unwrap();
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    lines[a_line - 1].push_str(&format!(
        " // seam: allow({a_rule}) tide strobe is held for a second"
    ));
    std::fs::write(&path, lines.join("\n") + "\n").unwrap();
    let toml_path = d.path().join("seam.toml");
    let mut toml = std::fs::read_to_string(&toml_path).unwrap();
    toml.push_str(&format!(
        "\n[[waive]]\nrule = \"{}\"\nsignal = \"{}\"\nreason = \"radio link ignores this during calibration\"\n",
        b["rule"].as_str().unwrap(),
        b["signal"].as_str().unwrap()
    ));
    std::fs::write(&toml_path, toml).unwrap();

    let report = d.path().join("report.html");
    let out = seam(
        &[
            "check",
            ".",
            "--format",
            "json",
            "--report",
            report.to_str().unwrap(),
        ],
        d.path(),
    );
    let json = stdout_json(&out, "waived demo json + report");
    let (sarif, _) = run_format(d.path(), "sarif");
    assert!(errors(&sarif_schema(), &sarif).is_empty());
    assert!(errors(&check_schema(), &json).is_empty());
    let results = sarif["runs"][0]["results"].as_array().unwrap();
    let findings = json["findings"].as_array().unwrap();
    let find = |f0: &Value| -> (Value, Value) {
        let i = findings
            .iter()
            .position(|f| {
                f["rule"] == f0["rule"]
                    && f["file"] == f0["file"]
                    && f["line"] == f0["line"]
                    && f["signal"] == f0["signal"]
            })
            .unwrap_or_else(|| panic!("finding {f0} is still reported"));
        (findings[i].clone(), results[i].clone())
    };
    let (fa, ra) = find(a);
    assert_eq!(fa["waived"], true, "inline waiver applied: {fa}");
    assert_eq!(ra["suppressions"][0]["kind"], "inSource");
    assert_eq!(
        ra["suppressions"][0]["justification"],
        "tide strobe is held for a second"
    );
    assert_eq!(
        ra["suppressions"][0]["location"]["physicalLocation"]["region"]["startLine"],
        a_line
    );
    let (fb, rb) = find(b);
    assert_eq!(fb["waived"], true, "seam.toml waiver applied: {fb}");
    assert_eq!(rb["suppressions"][0]["kind"], "external");
    assert_eq!(
        rb["suppressions"][0]["justification"],
        "radio link ignores this during calibration"
    );

    // The report's map has one edge per (source, destination, status) group of this run,
    // waived crossings included.
    let html = std::fs::read_to_string(&report).unwrap();
    let mut want: BTreeMap<(String, String, String), usize> = BTreeMap::new();
    for c in json["crossings"].as_array().unwrap() {
        let key = (
            c["source_domain"].as_str().unwrap().to_string(),
            c["destination_domain"].as_str().unwrap().to_string(),
            c["status"].as_str().unwrap().to_string(),
        );
        *want.entry(key).or_default() += 1;
    }
    let got: BTreeMap<(String, String, String), usize> = start_tags(&html)
        .into_iter()
        .filter(|(n, a, _)| n == "g" && has_class(a, "crossing-edge"))
        .map(|(_, a, _)| {
            (
                (
                    a["data-source"].clone(),
                    a["data-destination"].clone(),
                    a["data-status"].clone(),
                ),
                a["data-count"].parse().unwrap(),
            )
        })
        .collect();
    assert_eq!(got, want);
    let waived_findings = findings.iter().filter(|f| f["waived"] == true).count();
    assert_eq!(
        html.matches(r#"class="finding sev-"#).count(),
        findings.len()
    );
    assert_eq!(
        html.matches(" waived\" data-rule=").count(),
        waived_findings,
        "waived findings marked in the report"
    );
}

// ---------------------------------------------------------------------------------------------
// HTML report in headless Chromium
// ---------------------------------------------------------------------------------------------

fn chromium() -> PathBuf {
    for c in ["chromium", "chromium-browser"] {
        if Command::new(c)
            .arg("--version")
            .output()
            .map(|o| o.status.success())
            .unwrap_or(false)
        {
            return PathBuf::from(c);
        }
    }
    panic!("headless Chromium is needed (Debian package `chromium`; tests/run installs it)");
}

/// The DOM of `file` after Chromium has loaded and rendered it (the network stays closed).
fn chromium_dom(file: &Path) -> String {
    let profile = tempfile::tempdir().unwrap();
    let out = Command::new(chromium())
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
        ])
        .arg(format!("--user-data-dir={}", profile.path().display()))
        .arg("--dump-dom")
        .arg(file_url(file))
        .output()
        .expect("run chromium");
    assert!(
        out.status.success(),
        "chromium failed: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let dom = String::from_utf8_lossy(&out.stdout).to_string();
    assert!(dom.contains("</html>"), "chromium dumped no document");
    dom
}

fn decode(s: &str) -> String {
    s.replace("&lt;", "<")
        .replace("&gt;", ">")
        .replace("&quot;", "\"")
        .replace("&#39;", "'")
        .replace("&nbsp;", "\u{a0}")
        .replace("&amp;", "&")
}

/// Start tags of a serialized DOM: (tag name, attributes, byte offset).
fn start_tags(html: &str) -> Vec<(String, BTreeMap<String, String>, usize)> {
    let b = html.as_bytes();
    let mut out = Vec::new();
    let mut i = 0;
    while let Some(off) = html[i..].find('<') {
        let at = i + off;
        i = at + 1;
        if !b.get(i).is_some_and(|c| c.is_ascii_alphabetic()) {
            continue;
        }
        let mut j = i;
        while j < b.len() && (b[j].is_ascii_alphanumeric() || b[j] == b'-') {
            j += 1;
        }
        let name = html[i..j].to_ascii_lowercase();
        let mut attrs = BTreeMap::new();
        loop {
            while j < b.len() && (b[j] as char).is_whitespace() {
                j += 1;
            }
            if j >= b.len() || b[j] == b'>' || b[j] == b'/' {
                break;
            }
            let k0 = j;
            while j < b.len() && !matches!(b[j], b'=' | b'>' | b' ' | b'/' | b'\n' | b'\t') {
                j += 1;
            }
            let key = html[k0..j].to_string();
            let mut val = String::new();
            if j < b.len() && b[j] == b'=' {
                j += 1;
                if j < b.len() && (b[j] == b'"' || b[j] == b'\'') {
                    let q = b[j];
                    let v0 = j + 1;
                    let end = html[v0..]
                        .find(q as char)
                        .map(|e| v0 + e)
                        .unwrap_or(b.len());
                    val = decode(&html[v0..end]);
                    j = end + 1;
                } else {
                    let v0 = j;
                    while j < b.len() && !(b[j] as char).is_whitespace() && b[j] != b'>' {
                        j += 1;
                    }
                    val = decode(&html[v0..j]);
                }
            }
            attrs.insert(key, val);
        }
        out.push((name, attrs, at));
        i = j.max(i);
    }
    out
}

fn has_class(attrs: &BTreeMap<String, String>, class: &str) -> bool {
    attrs
        .get("class")
        .is_some_and(|c| c.split_whitespace().any(|x| x == class))
}

/// Text content between `from` and the next `close` tag after it, tags stripped.
fn text_until(html: &str, from: usize, close: &str) -> String {
    let end = html[from..]
        .find(close)
        .map(|e| from + e)
        .unwrap_or(html.len());
    let mut s = String::new();
    let mut in_tag = false;
    for c in html[from..end].chars() {
        match c {
            '<' => in_tag = true,
            '>' if in_tag => in_tag = false,
            c if !in_tag => s.push(c),
            _ => {}
        }
    }
    decode(&s)
}

/// Reference: the DOM headless Chromium builds from the report, against the JSON of the same
/// `seam check` run (`--format json --report FILE`).
#[test]
fn html_report_of_the_demo_renders_one_node_per_domain_and_one_edge_per_group() {
    let d = tempfile::tempdir().unwrap();
    let report = d.path().join("tide gauge report.html");
    let out = seam(
        &[
            "check",
            ".",
            "--format",
            "json",
            "--report",
            report.to_str().unwrap(),
        ],
        &demo(),
    );
    let json = stdout_json(&out, "demo json + report");
    let raw = std::fs::read_to_string(&report).expect("report written");

    // Self-contained (issue 7): nothing to fetch, no scripts.
    for bad in ["<script", "<link", " src=", "url(http", "@import"] {
        assert!(!raw.contains(bad), "report is not self-contained: {bad}");
    }

    let dom = chromium_dom(&report);
    let tags = start_tags(&dom);

    // Expected, from the JSON: domains of the clocks and of every crossing's ends; groups.
    let mut want_domains: BTreeSet<String> = BTreeSet::new();
    for c in json["clocks"].as_array().unwrap() {
        want_domains.insert(c["domain"].as_str().unwrap().to_string());
    }
    let mut want_edges: BTreeMap<(String, String, String), usize> = BTreeMap::new();
    for c in json["crossings"].as_array().unwrap() {
        let (s, t) = (
            c["source_domain"].as_str().unwrap(),
            c["destination_domain"].as_str().unwrap(),
        );
        want_domains.insert(s.to_string());
        want_domains.insert(t.to_string());
        *want_edges
            .entry((
                s.to_string(),
                t.to_string(),
                c["status"].as_str().unwrap().to_string(),
            ))
            .or_default() += 1;
    }

    let svg_count = tags
        .iter()
        .filter(|(n, a, _)| n == "svg" && has_class(a, "crossing-map"))
        .count();
    assert_eq!(
        svg_count,
        usize::from(!want_domains.is_empty()),
        "one inline SVG map"
    );
    let nodes: Vec<String> = tags
        .iter()
        .filter(|(n, a, _)| n == "g" && has_class(a, "domain-node"))
        .map(|(_, a, _)| a.get("data-domain").cloned().unwrap_or_default())
        .collect();
    assert_eq!(
        nodes.len(),
        want_domains.len(),
        "one node per domain: {nodes:?} vs {want_domains:?}"
    );
    assert_eq!(nodes.iter().cloned().collect::<BTreeSet<_>>(), want_domains);

    let mut edges: BTreeMap<(String, String, String), usize> = BTreeMap::new();
    for (n, a, _) in tags
        .iter()
        .filter(|(n, a, _)| n == "g" && has_class(a, "crossing-edge"))
    {
        assert_eq!(n, "g");
        let key = (
            a["data-source"].clone(),
            a["data-destination"].clone(),
            a["data-status"].clone(),
        );
        let count: usize = a["data-count"].parse().unwrap();
        assert!(
            edges.insert(key.clone(), count).is_none(),
            "two edges for one group {key:?}"
        );
    }
    assert_eq!(
        edges, want_edges,
        "one edge per (source, destination, status) group with its count"
    );

    // Legend: the three statuses.
    for st in ["synchronized", "unsafe", "waived"] {
        assert!(
            tags.iter()
                .any(|(_, a, _)| has_class(a, &format!("legend-{st}"))),
            "legend entry {st}"
        );
    }
    // Table of crossings: one row per crossing, in order, with its status.
    let rows: Vec<String> = tags
        .iter()
        .filter(|(n, a, _)| n == "tr" && has_class(a, "crossing-row"))
        .map(|(_, a, _)| a["data-status"].clone())
        .collect();
    let want_rows: Vec<String> = json["crossings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["status"].as_str().unwrap().to_string())
        .collect();
    assert_eq!(rows, want_rows);

    // Findings: one article each, in order; each excerpt holds the finding's source line,
    // read here from the file itself (escaping must keep `<=` and friends as text).
    let articles: Vec<&(String, BTreeMap<String, String>, usize)> = tags
        .iter()
        .filter(|(n, a, _)| n == "article" && has_class(a, "finding"))
        .collect();
    let findings = json["findings"].as_array().unwrap();
    assert_eq!(articles.len(), findings.len());
    for ((_, a, at), f) in articles.iter().zip(findings) {
        assert_eq!(a["data-rule"], f["rule"].as_str().unwrap());
        let file = demo().join(f["file"].as_str().unwrap());
        let Ok(src) = std::fs::read_to_string(&file) else {
            continue;
        };
        let line = src
            .lines()
            .nth(f["line"].as_u64().unwrap() as usize - 1)
            .unwrap_or("");
        let art = text_until(&dom, *at, "</article>");
        assert!(
            art.contains(line.trim_end()),
            "excerpt of {f} lacks its source line {line:?}:\n{art}"
        );
        assert!(
            art.contains(f["message"].as_str().unwrap()),
            "message of {f}"
        );
    }
    // Footer cautions (DESIGN.md section 1).
    let footer_at = dom.find("<footer").expect("footer");
    let footer = text_until(&dom, footer_at, "</footer>");
    assert!(footer.contains("structural and advisory"), "{footer}");
    assert!(
        footer.contains("estimates from the published formula"),
        "{footer}"
    );
}

// ---------------------------------------------------------------------------------------------
// explain
// ---------------------------------------------------------------------------------------------

/// `seam explain ID` prints docs/rules/ID.md as the repo has it (embedded at build time), or the
/// one-line summary and a note when the page is missing; unknown ids exit 2 listing the ids.
#[test]
fn explain_prints_each_rule_page_and_rejects_unknown_ids() {
    let root = repo_root();
    for id in rule_ids() {
        let out = seam(&["explain", &id], &root);
        assert_eq!(out.status.code(), Some(0), "explain {id}");
        let text = String::from_utf8_lossy(&out.stdout).to_string();
        match std::fs::read_to_string(root.join("docs/rules").join(format!("{id}.md"))) {
            Ok(page) => assert_eq!(
                text.trim_end(),
                page.trim_end(),
                "explain {id} prints its page"
            ),
            Err(_) => {
                assert!(
                    text.starts_with(&format!("{id}: ")) && text.contains("not written yet"),
                    "{text}"
                );
            }
        }
    }
    let out = seam(&["explain"], &root);
    assert_eq!(out.status.code(), Some(0));
    let listed: Vec<String> = String::from_utf8_lossy(&out.stdout)
        .lines()
        .map(|l| l.split_whitespace().next().unwrap_or("").to_string())
        .collect();
    assert_eq!(listed, rule_ids());
    let out = seam(&["explain", "no-such-rule"], &root);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(err.lines().count(), 1, "{err}");
    for id in rule_ids() {
        assert!(err.contains(&id), "the error lists {id}: {err}");
    }
}

// ---------------------------------------------------------------------------------------------
// errors: one line, exit 2
// ---------------------------------------------------------------------------------------------

fn assert_one_line_exit_2(out: &Output, what: &str, must_contain: &[&str]) {
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(
        out.status.code(),
        Some(2),
        "{what}: exit code; stderr {err}"
    );
    assert_eq!(
        err.lines().count(),
        1,
        "{what}: one line on stderr, got:\n{err}"
    );
    assert!(err.starts_with("seam: error: "), "{what}: {err}");
    assert!(
        !err.contains("panicked") && !err.contains("RUST_BACKTRACE"),
        "{what}: {err}"
    );
    assert!(out.stdout.is_empty(), "{what}: nothing on stdout");
    for m in must_contain {
        assert!(err.contains(m), "{what}: stderr names {m:?}: {err}");
    }
}

/// docs/cli.md and issue 7: usage and config errors are one line on stderr and exit 2.
#[test]
fn bad_arguments_missing_paths_and_broken_config_exit_2_with_one_line() {
    let d = tempfile::tempdir().unwrap();
    let dp = d.path();
    std::fs::write(
        dp.join("a.v"),
        "module a(input clk, input d, output reg q);\n  always @(posedge clk) q <= d;\nendmodule\n",
    )
    .unwrap();
    let cases: Vec<(&[&str], &[&str])> = vec![
        (&["check", "--format", "xml"], &["xml"]),
        (&["check", "--no-such-flag"], &["--no-such-flag"]),
        (&["check", "--report"], &["--report"]),
        (&["check", "--color", "purple"], &["purple"]),
        (&["frobnicate"], &["frobnicate"]),
        (&[], &["subcommand"]),
        (&["check", "no/such/dir"], &["no/such/dir"]),
        (
            &["check", ".", "--config", "missing.toml"],
            &["missing.toml"],
        ),
        (
            &["check", ".", "--report", "no/such/dir/r.html"],
            &["no/such/dir/r.html"],
        ),
        (&["explain", "a", "b"], &["b"]),
    ];
    for (args, names) in cases {
        let out = seam(args, dp);
        assert_one_line_exit_2(&out, &format!("seam {}", args.join(" ")), names);
    }
    // A value error in seam.toml: file, line and key (config.rs error format).
    std::fs::write(
        dp.join("seam.toml"),
        "[design]\nfiles = [\"*.v\"]\n\n[clocks]\nclk = { frequency = \"fast\" }\n",
    )
    .unwrap();
    for fmt in ["human", "json", "sarif"] {
        let out = seam(&["check", "--format", fmt], dp);
        assert_one_line_exit_2(
            &out,
            &format!("broken seam.toml, {fmt}"),
            &["seam.toml:5", "clocks.clk.frequency"],
        );
    }
    // A TOML syntax error: file and line.
    std::fs::write(dp.join("seam.toml"), "[design\nfiles = 3\n").unwrap();
    let out = seam(&["check"], dp);
    assert_one_line_exit_2(&out, "seam.toml syntax error", &["seam.toml:1"]);
    // An unknown rule in [rules].
    std::fs::write(dp.join("seam.toml"), "[rules]\nno-such-rule = \"error\"\n").unwrap();
    let out = seam(&["check", "--report", "r.html"], dp);
    assert_one_line_exit_2(
        &out,
        "unknown rule in seam.toml",
        &["seam.toml:2", "no-such-rule"],
    );
    assert!(
        !dp.join("r.html").exists(),
        "no report for a run that never started"
    );
}
