//! The HTML report (`seam check --report FILE.html`): one self-contained file (inline CSS and
//! SVG, no scripts, nothing fetched) with
//!
//! 1. the clock domains with their clocks, frequencies and roots;
//! 2. the crossing map: an inline SVG with one node per domain, laid out on a circle, and one
//!    edge per (source domain, destination domain, status) group, coloured and dashed by status
//!    (synchronized / unsafe / waived), with a legend;
//! 3. the table of crossings with their synchronizer scheme, stage count and, where the
//!    frequencies are known, an MTBF estimate;
//! 4. every finding with its source excerpt (escaped, the span marked) and related locations;
//! 5. a footer with the cautions: findings are structural and advisory, MTBF figures are
//!    estimates from the published formula and the given parameters.
//!
//! Stable hooks for tests and styling: `g.domain-node[data-domain]`,
//! `g.crossing-edge[data-source][data-destination][data-status][data-count]`,
//! `tr.crossing-row[data-status]`, `article.finding[data-rule]`, `pre.excerpt`.

use std::collections::BTreeMap;
use std::fmt::Write as _;
use std::path::Path;

use seam_analysis::config::Config;
use seam_analysis::finding::{Finding, Severity};
use seam_analysis::model::Span;
use seam_analysis::mtbf;
use seam_analysis::report::{Analysis, Crossing, CrossingStatus};

use super::sarif::{docs_base, CDC_CAUTION};

/// Escape text for HTML content and attribute values.
pub fn esc(s: &str) -> String {
    let mut o = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => o.push_str("&amp;"),
            '<' => o.push_str("&lt;"),
            '>' => o.push_str("&gt;"),
            '"' => o.push_str("&quot;"),
            '\'' => o.push_str("&#39;"),
            c if (c as u32) < 0x20 && c != '\n' && c != '\t' => o.push('\u{FFFD}'),
            c => o.push(c),
        }
    }
    o
}

pub const STATUSES: [CrossingStatus; 3] = [
    CrossingStatus::Synchronized,
    CrossingStatus::Unsafe,
    CrossingStatus::Waived,
];

pub fn status_name(s: CrossingStatus) -> &'static str {
    match s {
        CrossingStatus::Synchronized => "synchronized",
        CrossingStatus::Unsafe => "unsafe",
        CrossingStatus::Waived => "waived",
    }
}

/// Our palette ("harbour"): kelp green, buoy red, dusk violet.
fn status_colour(s: CrossingStatus) -> &'static str {
    match s {
        CrossingStatus::Synchronized => "#2f7d6d",
        CrossingStatus::Unsafe => "#c2452d",
        CrossingStatus::Waived => "#7a6fa8",
    }
}

fn status_dash(s: CrossingStatus) -> &'static str {
    match s {
        CrossingStatus::Synchronized => "none",
        CrossingStatus::Unsafe => "none",
        CrossingStatus::Waived => "7 5",
    }
}

fn status_width(s: CrossingStatus) -> f64 {
    match s {
        CrossingStatus::Unsafe => 3.6,
        _ => 2.4,
    }
}

const CSS: &str = r##"
:root { --ink:#1f2a3a; --muted:#5b6778; --paper:#fbfaf7; --band:#24476b; --rule:#d9d3c7;
  --sync:#2f7d6d; --unsafe:#c2452d; --waived:#7a6fa8; --err:#b3261e; --warn:#9a6a00; --note:#3c6e9f; }
* { box-sizing: border-box; }
body { margin:0; background:var(--paper); color:var(--ink);
  font: 15px/1.45 "DejaVu Sans", "Segoe UI", Helvetica, Arial, sans-serif; }
header.masthead { background:var(--band); color:#f3f0e8; padding:18px 32px 14px; }
header.masthead h1 { margin:0 0 4px; font-size:22px; letter-spacing:.02em; }
header.masthead .meta { margin:0; color:#c9d4e0; font-size:13px; }
ul.tally { list-style:none; margin:10px 0 0; padding:0; display:flex; flex-wrap:wrap; gap:8px; }
ul.tally li { background:rgba(255,255,255,.12); border-radius:12px; padding:2px 10px; font-size:13px; }
main { padding:8px 32px 24px; max-width:1240px; }
section { margin-top:22px; }
h2 { font-size:18px; border-bottom:2px solid var(--rule); padding-bottom:4px; margin:0 0 10px; }
table { border-collapse:collapse; width:100%; font-size:13.5px; }
th, td { text-align:left; padding:5px 8px; border-bottom:1px solid var(--rule); vertical-align:top; }
th { background:#efeadf; font-weight:600; }
td.num { text-align:right; font-variant-numeric: tabular-nums; }
code, pre { font-family: "DejaVu Sans Mono", Consolas, Menlo, monospace; font-size:12.5px; }
.pill { display:inline-block; border-radius:10px; padding:0 8px; font-size:12px; color:#fff; }
.pill.synchronized { background:var(--sync); } .pill.unsafe { background:var(--unsafe); }
.pill.waived { background:var(--waived); }
.map-wrap { display:flex; flex-wrap:wrap; gap:18px; align-items:flex-start; }
svg.crossing-map { background:#fffdf8; border:1px solid var(--rule); border-radius:6px; max-width:100%; height:auto; }
ul.legend { max-width:300px; list-style:none; padding:10px 14px; margin:0; border:1px solid var(--rule); border-radius:6px; background:#fffdf8; font-size:13px; }
ul.legend li { display:flex; align-items:center; gap:8px; margin:4px 0; }
ul.legend svg { flex:none; }
p.empty { color:var(--muted); font-style:italic; }
article.finding { border:1px solid var(--rule); border-left:5px solid var(--note); border-radius:4px;
  background:#fff; padding:8px 12px; margin:10px 0; }
article.finding.sev-error { border-left-color:var(--err); }
article.finding.sev-warning { border-left-color:var(--warn); }
article.finding.waived { border-left-color:var(--waived); opacity:.85; }
article.finding .head { display:flex; flex-wrap:wrap; gap:10px; align-items:baseline; }
.sev { font-weight:700; text-transform:uppercase; font-size:12px; letter-spacing:.05em; }
.sev.error { color:var(--err); } .sev.warning { color:var(--warn); } .sev.info, .sev.hint { color:var(--note); }
.where { color:var(--muted); font-size:13px; }
p.message { margin:6px 0; }
p.path { margin:4px 0; color:var(--muted); font-size:13px; }
pre.excerpt { background:#f6f3ec; border:1px solid #e7e1d4; border-radius:4px; padding:6px 0; margin:6px 0; overflow-x:auto; }
pre.excerpt .line { display:block; padding:0 10px; white-space:pre; }
pre.excerpt .line.hit { background:#fbecd9; }
pre.excerpt .ln { display:inline-block; min-width:3.5em; color:#9a917f; user-select:none; }
pre.excerpt mark { background:#f3c58b; color:inherit; border-radius:2px; }
ul.related { margin:4px 0 0; padding-left:20px; font-size:13px; }
p.waiver { margin:4px 0 0; color:var(--waived); font-size:13px; }
footer { border-top:2px solid var(--rule); margin:28px 32px 0; padding:10px 0 28px; color:var(--muted); font-size:12.5px; max-width:1176px; }
footer p { margin:4px 0; }
"##;

/// Domains in display order: those of the clocks (in clock order), then any other domain a
/// crossing names (e.g. asynchronous inputs), sorted.
pub fn domains(a: &Analysis) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    for c in &a.clocks {
        if !out.contains(&c.domain) {
            out.push(c.domain.clone());
        }
    }
    let mut extra: Vec<String> = a
        .crossings
        .iter()
        .flat_map(|c| [c.source_domain.clone(), c.destination_domain.clone()])
        .filter(|d| !out.contains(d))
        .collect();
    extra.sort();
    extra.dedup();
    out.extend(extra);
    out
}

/// Crossings grouped by (source domain, destination domain, status), with their count.
pub fn edge_groups(a: &Analysis) -> Vec<(String, String, CrossingStatus, usize)> {
    let mut m: BTreeMap<(String, String, usize), usize> = BTreeMap::new();
    for c in &a.crossings {
        let si = STATUSES.iter().position(|s| *s == c.status).unwrap_or(0);
        *m.entry((c.source_domain.clone(), c.destination_domain.clone(), si))
            .or_default() += 1;
    }
    m.into_iter()
        .map(|((s, d, si), n)| (s, d, STATUSES[si], n))
        .collect()
}

/// The highest clock frequency in a domain (the pessimistic one for MTBF), if any is known.
fn domain_frequency(a: &Analysis, domain: &str) -> Option<f64> {
    a.clocks
        .iter()
        .filter(|c| c.domain == domain)
        .filter_map(|c| c.frequency_hz)
        .filter(|f| f.is_finite() && *f > 0.0)
        .fold(None, |m: Option<f64>, f| Some(m.map_or(f, |m| m.max(f))))
}

/// MTBF estimate of one crossing (all its bits, one device), from the analysis' MTBF table
/// (`Analysis::mtbf`). `None`: not a recognized synchronizer.
fn crossing_mtbf(a: &Analysis, _config: &Config, c: &Crossing) -> Option<String> {
    use seam_analysis::report::SyncEstimate;
    let s = a
        .mtbf
        .synchronizers
        .iter()
        .find(|s| s.destination == c.destination && s.span == c.span)?;
    Some(match &s.estimate {
        SyncEstimate::Figure { log10_s, .. } => mtbf::format_years(*log10_s),
        SyncEstimate::NoSettlingSlack { .. } => "no settling slack".into(),
        SyncEstimate::Unbounded => "unbounded (the signal never changes)".into(),
        SyncEstimate::Unknown { .. } => "unknown (a frequency is not set)".into(),
    })
}

fn plural(n: usize, w: &str) -> String {
    format!("{n} {w}{}", if n == 1 { "" } else { "s" })
}

fn location_text(s: &Span) -> String {
    format!("{}:{}:{}", s.file, s.line, s.column)
}

struct Pt(f64, f64);

fn node_positions(n: usize, cx: f64, cy: f64, r: f64) -> Vec<Pt> {
    if n == 1 {
        return vec![Pt(cx, cy)];
    }
    (0..n)
        .map(|i| {
            let t = -std::f64::consts::FRAC_PI_2 + i as f64 * std::f64::consts::TAU / n as f64;
            Pt(cx + r * t.cos(), cy + r * t.sin())
        })
        .collect()
}

fn short(s: &str, n: usize) -> String {
    if s.chars().count() <= n {
        s.to_string()
    } else {
        let t: String = s.chars().take(n.saturating_sub(1)).collect();
        format!("{t}…")
    }
}

fn svg_map(a: &Analysis, doms: &[String]) -> String {
    const NODE_R: f64 = 50.0;
    let n = doms.len();
    let ring = if n <= 2 {
        170.0
    } else {
        (130.0 + 26.0 * n as f64).min(330.0)
    };
    let size = 2.0 * (ring + NODE_R + 44.0);
    let (cx, cy) = (size / 2.0, size / 2.0);
    let pos = node_positions(n, cx, cy, ring);
    let index: BTreeMap<&str, usize> = doms
        .iter()
        .enumerate()
        .map(|(i, d)| (d.as_str(), i))
        .collect();
    let groups = edge_groups(a);
    let mut s = String::new();
    let _ = write!(
        s,
        r##"<svg class="crossing-map" xmlns="http://www.w3.org/2000/svg" width="{w:.0}" height="{w:.0}" viewBox="0 0 {w:.0} {w:.0}" role="img" aria-label="Crossing map: {n} domains, {e} crossing groups">"##,
        w = size,
        e = groups.len()
    );
    s.push_str("<defs>");
    for st in STATUSES {
        let _ = write!(
            s,
            r##"<marker id="tip-{name}" viewBox="0 0 10 10" refX="9" refY="5" markerWidth="7" markerHeight="7" orient="auto-start-reverse"><path d="M0,0 L10,5 L0,10 z" fill="{c}"/></marker>"##,
            name = status_name(st),
            c = status_colour(st)
        );
    }
    s.push_str("</defs>");
    // Edges first, so the nodes sit on top of their ends.
    s.push_str(r##"<g class="edges">"##);
    // Lanes per directed pair: the statuses present, in STATUSES order.
    let mut lanes: BTreeMap<(usize, usize), usize> = BTreeMap::new();
    for (src, dst, st, count) in &groups {
        let (Some(&i), Some(&j)) = (index.get(src.as_str()), index.get(dst.as_str())) else {
            continue;
        };
        let lane = lanes.entry((i, j)).or_insert(0);
        let k = *lane;
        *lane += 1;
        let title = format!(
            "{src} → {dst}: {} {}",
            plural(*count, "crossing"),
            status_name(*st)
        );
        let (d, label) = if i == j {
            // A loop outside the node, away from the centre.
            let (px, py) = (pos[i].0, pos[i].1);
            let (mut ux, mut uy) = (px - cx, py - cy);
            let len = (ux * ux + uy * uy).sqrt();
            if len < 1e-6 {
                ux = 0.0;
                uy = -1.0;
            } else {
                ux /= len;
                uy /= len;
            }
            let reach = NODE_R + 46.0 + 16.0 * k as f64;
            let (nx, ny) = (-uy, ux);
            let a0 = (px + ux * NODE_R + nx * 18.0, py + uy * NODE_R + ny * 18.0);
            let a1 = (px + ux * NODE_R - nx * 18.0, py + uy * NODE_R - ny * 18.0);
            let c0 = (px + ux * reach + nx * 40.0, py + uy * reach + ny * 40.0);
            let c1 = (px + ux * reach - nx * 40.0, py + uy * reach - ny * 40.0);
            (
                format!(
                    "M{:.1},{:.1} C{:.1},{:.1} {:.1},{:.1} {:.1},{:.1}",
                    a0.0, a0.1, c0.0, c0.1, c1.0, c1.1, a1.0, a1.1
                ),
                (px + ux * (reach - 6.0), py + uy * (reach - 6.0)),
            )
        } else {
            let (p, q) = (&pos[i], &pos[j]);
            let (dx, dy) = (q.0 - p.0, q.1 - p.1);
            let len = (dx * dx + dy * dy).sqrt().max(1e-6);
            // Left-hand normal of the directed edge: the two directions bend to opposite sides.
            let (nx, ny) = (dy / len, -dx / len);
            let bend = 26.0 + 24.0 * k as f64;
            let mid = ((p.0 + q.0) / 2.0, (p.1 + q.1) / 2.0);
            let ctl = (mid.0 + nx * 2.0 * bend, mid.1 + ny * 2.0 * bend);
            let unit = |from: (f64, f64), to: (f64, f64)| {
                let (x, y) = (to.0 - from.0, to.1 - from.1);
                let l = (x * x + y * y).sqrt().max(1e-6);
                (x / l, y / l)
            };
            let u0 = unit((p.0, p.1), ctl);
            let u1 = unit((q.0, q.1), ctl);
            let a0 = (p.0 + u0.0 * NODE_R, p.1 + u0.1 * NODE_R);
            let a1 = (q.0 + u1.0 * (NODE_R + 3.0), q.1 + u1.1 * (NODE_R + 3.0));
            (
                format!(
                    "M{:.1},{:.1} Q{:.1},{:.1} {:.1},{:.1}",
                    a0.0, a0.1, ctl.0, ctl.1, a1.0, a1.1
                ),
                (mid.0 + nx * bend, mid.1 + ny * bend),
            )
        };
        let _ = write!(
            s,
            r##"<g class="crossing-edge status-{name}" data-source="{src}" data-destination="{dst}" data-status="{name}" data-count="{count}"><title>{title}</title><path d="{d}" fill="none" stroke="{c}" stroke-width="{w}" stroke-dasharray="{dash}" stroke-linecap="round" marker-end="url(#tip-{name})"/><circle cx="{lx:.1}" cy="{ly:.1}" r="10" fill="#fffdf8" stroke="{c}" stroke-width="1.5"/><text x="{lx:.1}" y="{ty:.1}" text-anchor="middle" font-size="11" font-weight="700" fill="{c}">{count}</text></g>"##,
            name = status_name(*st),
            src = esc(src),
            dst = esc(dst),
            title = esc(&title),
            c = status_colour(*st),
            w = status_width(*st),
            dash = status_dash(*st),
            lx = label.0,
            ly = label.1,
            ty = label.1 + 4.0,
        );
    }
    s.push_str("</g>");
    s.push_str(r##"<g class="nodes">"##);
    for (i, d) in doms.iter().enumerate() {
        let Pt(x, y) = pos[i];
        let clocks: Vec<&seam_analysis::report::ClockInfo> =
            a.clocks.iter().filter(|c| &c.domain == d).collect();
        let sub = match (clocks.len(), domain_frequency(a, d)) {
            (0, _) => "no clock".to_string(),
            (1, Some(f)) => mtbf::format_frequency(f),
            (1, None) => "frequency unknown".to_string(),
            (k, _) => format!("{k} clocks"),
        };
        let names: Vec<String> = clocks
            .iter()
            .map(|c| match c.frequency_hz {
                Some(f) => format!("{} ({})", c.name, mtbf::format_frequency(f)),
                None => c.name.clone(),
            })
            .collect();
        let title = if names.is_empty() {
            format!("domain {d}")
        } else {
            format!("domain {d}: {}", names.join(", "))
        };
        let _ = write!(
            s,
            r##"<g class="domain-node" data-domain="{dom}"><title>{title}</title><circle cx="{x:.1}" cy="{y:.1}" r="{r}" fill="#f4efe6" stroke="#24476b" stroke-width="2.5"/><text x="{x:.1}" y="{y1:.1}" text-anchor="middle" font-size="{fs}" font-weight="700" fill="#1f2a3a">{label}</text><text x="{x:.1}" y="{y2:.1}" text-anchor="middle" font-size="11" fill="#5b6778">{sub}</text></g>"##,
            dom = esc(d),
            title = esc(&title),
            r = NODE_R,
            y1 = y - 1.0,
            y2 = y + 15.0,
            fs = match d.chars().count() {
                0..=9 => 13.0,
                10..=12 => 11.5,
                _ => 10.0,
            },
            label = esc(&short(d, 15)),
            sub = esc(&sub),
        );
    }
    s.push_str("</g></svg>");
    s
}

fn legend() -> String {
    let mut s = String::from(r##"<ul class="legend" aria-label="Legend">"##);
    let what = [
        (
            CrossingStatus::Synchronized,
            "synchronized: a synchronizer chain or a safe multi-bit scheme",
        ),
        (
            CrossingStatus::Unsafe,
            "unsafe: no synchronizer, or logic before it",
        ),
        (
            CrossingStatus::Waived,
            "waived: unsafe, but accepted by a waiver",
        ),
    ];
    for (st, text) in what {
        let _ = write!(
            s,
            r##"<li class="legend-{name}"><svg width="46" height="14" viewBox="0 0 46 14" aria-hidden="true"><line x1="2" y1="7" x2="36" y2="7" stroke="{c}" stroke-width="{w}" stroke-dasharray="{dash}"/><path d="M36,2 L45,7 L36,12 z" fill="{c}"/></svg><span>{text}</span></li>"##,
            name = status_name(st),
            c = status_colour(st),
            w = status_width(st),
            dash = status_dash(st),
            text = esc(text)
        );
    }
    s.push_str(r##"<li class="legend-count"><svg width="46" height="22" viewBox="0 0 46 22" aria-hidden="true"><circle cx="23" cy="11" r="9" fill="#fffdf8" stroke="#5b6778" stroke-width="1.5"/><text x="23" y="15" text-anchor="middle" font-size="11" font-weight="700" fill="#5b6778">n</text></svg><span>number of crossings in the group</span></li>"##);
    s.push_str("</ul>");
    s
}

fn domains_table(a: &Analysis, doms: &[String]) -> String {
    if doms.is_empty() {
        return r##"<p class="empty">No clock domains were found.</p>"##.to_string();
    }
    let mut s = String::from(
        r##"<table class="domains"><thead><tr><th>Domain</th><th>Clock</th><th>Frequency</th><th>Root</th><th class="num">Registers</th></tr></thead><tbody>"##,
    );
    for d in doms {
        let regs = a
            .registers
            .iter()
            .filter(|r| r.domain.as_deref() == Some(d.as_str()))
            .count();
        let clocks: Vec<_> = a.clocks.iter().filter(|c| &c.domain == d).collect();
        if clocks.is_empty() {
            let _ = write!(
                s,
                r##"<tr class="domain-row" data-domain="{d}"><td><strong>{d}</strong></td><td colspan="3">no clock (asynchronous inputs)</td><td class="num">{regs}</td></tr>"##,
                d = esc(d)
            );
            continue;
        }
        for (k, c) in clocks.iter().enumerate() {
            let f = c
                .frequency_hz
                .map(mtbf::format_frequency)
                .unwrap_or_else(|| "unknown".to_string());
            let first = if k == 0 {
                format!(
                    r##"<td rowspan="{}"><strong>{}</strong></td>"##,
                    clocks.len(),
                    esc(d)
                )
            } else {
                String::new()
            };
            let regs_cell = if k == 0 {
                format!(
                    r##"<td class="num" rowspan="{}">{regs}</td>"##,
                    clocks.len()
                )
            } else {
                String::new()
            };
            let _ = write!(
                s,
                r##"<tr class="domain-row" data-domain="{dd}">{first}<td><code>{name}</code></td><td>{f}</td><td><code>{root}</code></td>{regs_cell}</tr>"##,
                dd = esc(d),
                name = esc(&c.name),
                f = esc(&f),
                root = esc(&c.root),
            );
        }
    }
    s.push_str("</tbody></table>");
    s
}

fn crossings_table(a: &Analysis, config: &Config) -> String {
    if a.crossings.is_empty() {
        return r##"<p class="empty">No domain crossings were found.</p>"##.to_string();
    }
    let mut s = String::from(
        r##"<table class="crossings"><thead><tr><th>From → to</th><th>Source</th><th>Destination</th><th class="num">Bits</th><th>Status</th><th>Synchronizer</th><th class="num">Stages</th><th>MTBF estimate*</th><th>Where</th></tr></thead><tbody>"##,
    );
    for c in &a.crossings {
        let name = status_name(c.status);
        let _ = write!(
            s,
            r##"<tr class="crossing-row" data-status="{name}"><td>{sd} → {dd}</td><td><code>{src}</code></td><td><code>{dst}</code></td><td class="num">{bits}</td><td><span class="pill {name}">{name}</span></td><td>{scheme}</td><td class="num">{stages}</td><td>{mtbf}</td><td><code>{at}</code></td></tr>"##,
            sd = esc(&c.source_domain),
            dd = esc(&c.destination_domain),
            src = esc(&c.source),
            dst = esc(&c.destination),
            bits = c.bits,
            scheme = esc(c.scheme.as_deref().unwrap_or("none")),
            stages = c
                .stages
                .map(|n| n.to_string())
                .unwrap_or_else(|| "–".into()),
            mtbf = esc(&crossing_mtbf(a, config, c).unwrap_or_else(|| "–".into())),
            at = esc(&location_text(&c.span)),
        );
    }
    s.push_str("</tbody></table>");
    s
}

/// Source lines around a span, the span marked; `None` when the file cannot be read.
fn excerpt(text: &str, span: &Span) -> Option<String> {
    let lines: Vec<&str> = text.lines().collect();
    if span.line == 0 || lines.is_empty() {
        return None;
    }
    let first = span.line as usize;
    let last = (span.end_line as usize).max(first);
    let from = first.saturating_sub(2).max(1);
    let to = (last + 2).min(lines.len()).min(from + 14);
    if from > lines.len() {
        return None;
    }
    let mut s = String::from(r##"<pre class="excerpt">"##);
    for ln in from..=to {
        let line = lines[ln - 1];
        let hit = ln >= first && ln <= last;
        let _ = write!(
            s,
            r##"<span class="line{}"><span class="ln">{ln}</span>"##,
            if hit { " hit" } else { "" }
        );
        if hit {
            let chars: Vec<char> = line.chars().collect();
            let a = if ln == first {
                (span.column as usize).saturating_sub(1)
            } else {
                0
            }
            .min(chars.len());
            let b = if ln == last {
                (span.end_column as usize).saturating_sub(1)
            } else {
                chars.len()
            }
            .clamp(a, chars.len());
            let (x, y, z): (String, String, String) = (
                chars[..a].iter().collect(),
                chars[a..b].iter().collect(),
                chars[b..].iter().collect(),
            );
            s.push_str(&esc(&x));
            if !y.is_empty() {
                let _ = write!(s, "<mark>{}</mark>", esc(&y));
            }
            s.push_str(&esc(&z));
        } else {
            s.push_str(&esc(line));
        }
        s.push_str("</span>");
    }
    s.push_str("</pre>");
    Some(s)
}

fn finding_html(f: &Finding, read: &mut dyn FnMut(&str) -> Option<String>, base: &str) -> String {
    let sev = f.severity.as_str();
    let mut s = String::new();
    let _ = write!(
        s,
        r##"<article class="finding sev-{sev}{w}" data-rule="{rule}" data-severity="{sev}"><div class="head"><span class="sev {sev}">{sev}</span><a class="rule" href="{base}{rule}.md"><code>{rule}</code></a><span class="where">{at}</span></div><p class="message">{msg}</p>"##,
        w = if f.waived { " waived" } else { "" },
        rule = esc(&f.rule),
        base = esc(base),
        at = esc(&location_text(&f.span)),
        msg = esc(&f.message),
    );
    if f.signal.is_some() || f.source_domain.is_some() || f.destination_domain.is_some() {
        let _ = write!(
            s,
            r##"<p class="path">signal <code>{}</code>: {} → {}</p>"##,
            esc(f.signal.as_deref().unwrap_or("?")),
            esc(f.source_domain.as_deref().unwrap_or("?")),
            esc(f.destination_domain.as_deref().unwrap_or("?")),
        );
    }
    match read(&f.span.file).and_then(|t| excerpt(&t, &f.span)) {
        Some(x) => s.push_str(&x),
        None => s.push_str(r##"<p class="empty">(source not available)</p>"##),
    }
    if !f.related.is_empty() {
        s.push_str(r##"<ul class="related">"##);
        for r in &f.related {
            let _ = write!(
                s,
                "<li>{} <span class=\"where\">{}</span></li>",
                esc(&r.message),
                esc(&location_text(&r.span))
            );
        }
        s.push_str("</ul>");
    }
    if f.waived {
        let _ = write!(
            s,
            r##"<p class="waiver">Waived: {}</p>"##,
            esc(f
                .waiver_reason
                .as_deref()
                .filter(|r| !r.trim().is_empty())
                .unwrap_or("(no reason given)"))
        );
    }
    s.push_str("</article>");
    s
}

/// The whole report as one HTML document.
pub fn render(
    a: &Analysis,
    config: &Config,
    read: &dyn Fn(&str) -> Option<String>,
    root: &Path,
) -> String {
    let doms = domains(a);
    let groups = edge_groups(a);
    let base = docs_base();
    let project = root
        .canonicalize()
        .ok()
        .and_then(|p| p.file_name().map(|n| n.to_string_lossy().to_string()))
        .unwrap_or_else(|| root.display().to_string());
    let live = |s: Severity| {
        a.findings
            .iter()
            .filter(|f| !f.waived && f.severity == s)
            .count()
    };
    let waived = a.findings.iter().filter(|f| f.waived).count();
    let cross = |s: CrossingStatus| a.crossings.iter().filter(|c| c.status == s).count();

    let mut h = String::new();
    let _ = write!(
        h,
        r##"<!DOCTYPE html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1"><meta name="generator" content="seam {ver}"><title>Seam crossing report: {p}</title><style>{CSS}</style></head><body>"##,
        ver = env!("CARGO_PKG_VERSION"),
        p = esc(&project)
    );
    let _ = write!(
        h,
        r##"<header class="masthead"><h1>Seam crossing report: {p}</h1><p class="meta">{files}, {modules}, {clocks}, {doms} · seam {ver}</p><ul class="tally"><li class="tally-error">{e}</li><li class="tally-warning">{w}</li><li class="tally-note">{n}</li><li class="tally-hint">{hi}</li><li class="tally-waived">{wv} waived</li><li class="tally-crossings">crossings: {cs} synchronized, {cu} unsafe, {cw} waived</li></ul></header><main>"##,
        p = esc(&project),
        files = plural(a.files, "file"),
        modules = plural(a.modules, "module"),
        clocks = plural(a.clocks.len(), "clock"),
        doms = plural(doms.len(), "domain"),
        ver = env!("CARGO_PKG_VERSION"),
        e = plural(live(Severity::Error), "error"),
        w = plural(live(Severity::Warning), "warning"),
        n = plural(live(Severity::Info), "note"),
        hi = plural(live(Severity::Hint), "hint"),
        wv = waived,
        cs = cross(CrossingStatus::Synchronized),
        cu = cross(CrossingStatus::Unsafe),
        cw = cross(CrossingStatus::Waived),
    );
    let _ = write!(
        h,
        r##"<section id="domains"><h2>Clock domains</h2>{}</section>"##,
        domains_table(a, &doms)
    );
    let _ = write!(
        h,
        r##"<section id="map"><h2>Crossing map</h2><p class="caption">{} · {} (one edge per source domain, destination domain and status)</p>"##,
        plural(doms.len(), "domain"),
        plural(groups.len(), "edge")
    );
    if doms.is_empty() {
        h.push_str(r##"<p class="empty">Nothing to draw: no clock domains were found.</p>"##);
    } else {
        let _ = write!(
            h,
            r##"<div class="map-wrap">{}{}</div>"##,
            svg_map(a, &doms),
            legend()
        );
    }
    h.push_str("</section>");
    let _ = write!(
        h,
        r##"<section id="crossings"><h2>Crossings</h2>{}</section>"##,
        crossings_table(a, config)
    );
    let _ = write!(
        h,
        r##"<section id="findings"><h2>Findings ({})</h2>"##,
        a.findings.len()
    );
    if a.findings.is_empty() {
        h.push_str(r##"<p class="empty">No findings.</p>"##);
    }
    let mut cache: BTreeMap<String, Option<String>> = BTreeMap::new();
    let mut cached_read = |file: &str| -> Option<String> {
        cache
            .entry(file.to_string())
            .or_insert_with(|| read(file))
            .clone()
    };
    for f in &a.findings {
        h.push_str(&finding_html(f, &mut cached_read, &base));
    }
    h.push_str("</section></main>");
    let m = &config.mtbf;
    let _ = write!(
        h,
        r##"<footer><p class="caution">{cdc}</p><p class="caution">* {mtbf} Model: MTBF = e^(t_r/τ) / (T_W · f_clk · f_data), t_r = (N − 1)·(T_stage − t_setup − t_clk→q − t_routing), with τ = {tau} ps, T_W = {tw} ps, t_setup = {su} ps, t_clk→q = {cq} ps, t_routing = {rt} ps, {dr} transitions per source cycle, {at} for asynchronous inputs; one device, every bit of the crossing. Design total: {total}. The τ and T_W defaults are placeholders: set [mtbf] in seam.toml from your vendor's characterization data.</p><p>Generated by seam {ver}. Rule pages: <code>seam explain RULE-ID</code>.</p></footer></body></html>"##,
        cdc = esc(CDC_CAUTION),
        mtbf = esc(mtbf::CAUTION),
        tau = m.tau_ps,
        tw = m.window_ps,
        su = m.setup_ps,
        cq = m.clock_to_q_ps,
        rt = m.routing_ps,
        dr = m.data_rate,
        at = esc(&mtbf::format_frequency(m.async_toggle_hz)),
        total = esc(&match a.mtbf.design_log10_s {
            Some(l) => format!(
                "{} across {} device(s), target {} years",
                mtbf::format_years(l),
                a.mtbf.units.max(1),
                m.target_years
            ),
            None => "no figure".to_string(),
        }),
        ver = env!("CARGO_PKG_VERSION"),
    );
    h.push('\n');
    h
}

/// Write the report to `path`; the error is one line naming the file.
pub fn write(
    path: &Path,
    a: &Analysis,
    config: &Config,
    read: &dyn Fn(&str) -> Option<String>,
    root: &Path,
) -> Result<(), String> {
    std::fs::write(path, render(a, config, read, root))
        .map_err(|e| format!("{}: cannot write the report: {e}", path.display()))
}

#[cfg(test)]
mod tests {
    use super::*;
    use seam_analysis::report::ClockInfo;

    fn span(file: &str, line: u32, column: u32, end_column: u32) -> Span {
        Span {
            file: file.into(),
            start: 0,
            end: 0,
            line,
            column,
            end_line: line,
            end_column,
        }
    }

    fn crossing(s: &str, d: &str, st: CrossingStatus) -> Crossing {
        Crossing {
            source_domain: s.into(),
            destination_domain: d.into(),
            source: format!("top.{s}_q"),
            destination: format!("top.{d}_q"),
            status: st,
            scheme: Some("2-flop chain".into()),
            stages: Some(2),
            bits: 1,
            span: span("rtl/a.v", 2, 3, 5),
        }
    }

    fn clock(name: &str, f: f64) -> ClockInfo {
        ClockInfo {
            name: name.into(),
            frequency_hz: Some(f),
            group: None,
            root: format!("top.{name}"),
            domain: name.into(),
        }
    }

    #[test]
    fn one_node_per_domain_one_edge_per_group_and_escaped_excerpts() {
        let mut a = Analysis {
            clocks: vec![clock("clk_a", 100e6), clock("clk_b", 25e6)],
            crossings: vec![
                crossing("clk_a", "clk_b", CrossingStatus::Synchronized),
                crossing("clk_a", "clk_b", CrossingStatus::Synchronized),
                crossing("clk_a", "clk_b", CrossingStatus::Unsafe),
                crossing("clk_b", "clk_a", CrossingStatus::Waived),
                crossing("async", "clk_a", CrossingStatus::Unsafe),
            ],
            ..Analysis::default()
        };
        let mut f = Finding::new(
            "unsynchronized-crossing",
            Severity::Error,
            span("rtl/a.v", 2, 5, 7),
            "x <b> & y",
        );
        f.signal = Some("x".into());
        a.findings = vec![f];
        let read = |_: &str| Some("module m;\n  q <= <b>d & e;\nendmodule\n".to_string());
        let html = render(&a, &Config::default(), &read, Path::new("."));
        assert_eq!(html.matches(r##"<g class="domain-node""##).count(), 3);
        assert_eq!(html.matches(r##"<g class="crossing-edge"##).count(), 4);
        assert!(html.contains(r##"data-source="clk_a" data-destination="clk_b" data-status="synchronized" data-count="2""##));
        assert!(html.contains("x &lt;b&gt; &amp; y"));
        assert!(
            html.contains("q <mark>&lt;=</mark> &lt;b&gt;d &amp; e;"),
            "{html}"
        );
        assert!(!html.contains("<b>"));
    }
}
