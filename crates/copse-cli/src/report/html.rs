//! The report as one self-contained HTML page (`--report FILE.html`): every section of
//! the printed report, the charts drawn inline as SVG, the decision tables as tables,
//! and the caution, styled by an inline style sheet. No script, font, image or link to
//! anything outside the file, so it opens offline and can be mailed or archived as is.
//! The page is also well-formed XML (every element closed, every attribute quoted),
//! which its test checks.
use super::decision::{share_with_interval, DecisionView};
use crate::numbers::{pct, sig, trim_num};
use copse_forest::decision::CutoffTable;
use std::fmt::Write;

/// A chart placed after the section whose heading starts with `after`.
pub struct Chart {
    /// The start of the heading of the section the chart belongs to.
    pub after: String,
    /// What the chart shows (its caption).
    pub caption: String,
    /// The chart as SVG text.
    pub svg: String,
}

/// What a page is made of.
pub struct Page<'a> {
    /// The printed report without colour; its first line is the title.
    pub text: &'a str,
    /// A line under the title (model, data).
    pub subtitle: String,
    /// The decision tables, drawn as tables in their sections.
    pub decision: Option<&'a DecisionView>,
    /// The charts.
    pub charts: Vec<Chart>,
}

/// One section of the printed report: its heading and body lines.
#[derive(Debug, PartialEq)]
pub struct Section<'a> {
    /// The heading line.
    pub heading: &'a str,
    /// The lines under it.
    pub body: Vec<&'a str>,
}

/// The title and sections of a printed report: a line that does not start with a space
/// is a heading, and the lines after it up to the next heading are its body.
pub fn sections(text: &str) -> (&str, Vec<Section<'_>>) {
    let mut lines = text.lines();
    let title = lines.next().unwrap_or("copse report");
    let mut out: Vec<Section<'_>> = Vec::new();
    for l in lines {
        if !l.is_empty() && !l.starts_with(' ') {
            out.push(Section {
                heading: l,
                body: Vec::new(),
            });
        } else if let Some(s) = out.last_mut() {
            s.body.push(l);
        }
    }
    for s in &mut out {
        while s.body.last().is_some_and(|l| l.trim().is_empty()) {
            s.body.pop();
        }
    }
    (title, out)
}

/// Text made safe for HTML and XML.
pub fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            _ => out.push(c),
        }
    }
    out
}

/// The anchor of section `k`.
fn anchor(k: usize, heading: &str) -> String {
    let mut slug: String = heading
        .chars()
        .take_while(|&c| c != '(')
        .map(|c| {
            if c.is_ascii_alphanumeric() {
                c.to_ascii_lowercase()
            } else {
                '-'
            }
        })
        .collect();
    while slug.contains("--") {
        slug = slug.replace("--", "-");
    }
    format!("s{}-{}", k + 1, slug.trim_matches('-'))
}

/// The style sheet: a narrow reading column, section cards, tables with figures
/// aligned right, warnings in amber.
const STYLE: &str = "
:root { --ink: #212529; --grey: #6e757d; --teal: #267880; --line: #e4e7eb; --warm: #fff6e5; }
* { box-sizing: border-box; }
body { margin: 0; background: #f6f7f8; color: var(--ink);
  font: 15px/1.5 system-ui, -apple-system, 'Segoe UI', sans-serif; }
header { background: var(--teal); color: #fff; padding: 22px 32px 18px; }
header h1 { margin: 0; font-size: 24px; font-weight: 600; }
header p { margin: 4px 0 0; opacity: 0.9; }
.page { display: flex; gap: 24px; max-width: 1180px; margin: 0 auto; padding: 24px; }
nav { flex: 0 0 220px; position: sticky; top: 12px; align-self: flex-start; font-size: 13px; }
nav ol { list-style: none; margin: 0; padding: 0; }
nav li { margin: 0 0 6px; }
nav a { color: var(--teal); text-decoration: none; }
main { flex: 1; min-width: 0; }
section { background: #fff; border: 1px solid var(--line); border-radius: 6px;
  padding: 14px 20px 16px; margin: 0 0 18px; }
section h2 { font-size: 15px; letter-spacing: 0.04em; margin: 0 0 10px; color: var(--teal); }
section.notice { background: var(--warm); border-color: #e8c98f; }
section.notice h2, section.caution h2 { color: #8a5a00; }
section.caution { border-left: 4px solid #bf7820; }
pre { margin: 0; font: 12.5px/1.45 ui-monospace, 'DejaVu Sans Mono', monospace;
  white-space: pre; overflow-x: auto; }
table { border-collapse: collapse; margin: 4px 0 10px; font-size: 13.5px; }
th, td { padding: 4px 10px; border-bottom: 1px solid var(--line); text-align: right; }
th { color: var(--grey); font-weight: 600; }
td:first-child, th:first-child { text-align: left; }
figure { margin: 12px 0 0; }
figure svg { max-width: 100%; height: auto; border: 1px solid var(--line); }
figcaption { color: var(--grey); font-size: 13px; }
details { margin-top: 8px; }
summary { color: var(--grey); font-size: 13px; cursor: pointer; }
p.source { color: var(--grey); font-size: 13px; margin: 6px 0 0; }
footer { color: var(--grey); font-size: 12px; text-align: center; padding: 0 0 24px; }
@media (max-width: 820px) { .page { display: block; } nav { display: none; } }
@media print { nav { display: none; } body { background: #fff; } }
";

/// The page as HTML text.
pub fn render(page: &Page<'_>) -> String {
    let (title, secs) = sections(page.text);
    let mut h = String::new();
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"/>\n\
         <title>{}</title>\n<style>{STYLE}</style>\n</head>\n<body>\n",
        escape(title)
    );
    let _ = writeln!(
        h,
        "<header><h1>{}</h1><p>{}</p></header>",
        escape(title),
        escape(&page.subtitle)
    );
    let _ = writeln!(h, "<div class=\"page\">\n<nav><ol>");
    for (k, s) in secs.iter().enumerate() {
        let _ = writeln!(
            h,
            "<li><a href=\"#{}\">{}</a></li>",
            anchor(k, s.heading),
            escape(&short_heading(s.heading))
        );
    }
    let _ = writeln!(h, "</ol></nav>\n<main>");
    for (k, s) in secs.iter().enumerate() {
        let class = if s.heading.starts_with("READ FIRST") {
            " class=\"notice\""
        } else if s.heading.starts_with("CAUTION") {
            " class=\"caution\""
        } else {
            ""
        };
        let _ = writeln!(
            h,
            "<section id=\"{}\"{class}>\n<h2>{}</h2>",
            anchor(k, s.heading),
            escape(s.heading)
        );
        let printed = s.body.join("\n");
        let table = page.decision.and_then(|d| decision_table(d, s.heading));
        match table {
            Some(t) => {
                h.push_str(&t);
                let _ = writeln!(
                    h,
                    "<details><summary>as printed</summary><pre>{}</pre></details>",
                    escape(&printed)
                );
            }
            None if s.heading.starts_with("CAUTION") => {
                let words: Vec<&str> = printed.split_whitespace().collect();
                let _ = writeln!(h, "<p>{}</p>", escape(&words.join(" ")));
            }
            None => {
                let _ = writeln!(h, "<pre>{}</pre>", escape(&printed));
            }
        }
        for c in page
            .charts
            .iter()
            .filter(|c| s.heading.starts_with(&c.after))
        {
            let _ = writeln!(
                h,
                "<figure>{}<figcaption>{}</figcaption></figure>",
                bare_svg(&c.svg),
                escape(&c.caption)
            );
        }
        let _ = writeln!(h, "</section>");
    }
    let _ = writeln!(
        h,
        "</main>\n</div>\n<footer>Made by copse {}. This file needs nothing else to open.</footer>\n</body>\n</html>",
        env!("CARGO_PKG_VERSION")
    );
    h
}

/// A heading without its parenthesised remark, in sentence case, for the contents.
fn short_heading(heading: &str) -> String {
    let head = heading.split(" (").next().unwrap_or(heading).trim();
    let lower = head.to_lowercase();
    let mut c = lower.chars();
    match c.next() {
        Some(f) => f.to_uppercase().chain(c).collect(),
        None => String::new(),
    }
}

/// An SVG document without an XML declaration, ready to sit inside the page.
fn bare_svg(svg: &str) -> &str {
    match svg.find("<svg") {
        Some(i) => &svg[i..],
        None => svg,
    }
}

fn row(h: &mut String, cells: &[String]) {
    h.push_str("<tr>");
    for c in cells {
        let _ = write!(h, "<td>{}</td>", escape(c));
    }
    h.push_str("</tr>\n");
}

fn head(h: &mut String, cells: &[&str]) {
    h.push_str("<table>\n<thead><tr>");
    for c in cells {
        let _ = write!(h, "<th>{}</th>", escape(c));
    }
    h.push_str("</tr></thead>\n<tbody>\n");
}

fn cutoff_table(h: &mut String, t: &CutoffTable, yes: &str) {
    head(h, &["", &format!("called '{yes}'"), "called other"]);
    row(
        h,
        &[
            format!("actually '{yes}'"),
            format!("{} caught", t.caught),
            format!("{} missed", t.missed),
        ],
    );
    row(
        h,
        &[
            "actually other".into(),
            format!("{} false alarms", t.false_alarms),
            format!("{} passed", t.passed),
        ],
    );
    h.push_str("</tbody></table>\n");
    head(h, &["rate", "value (95% interval)"]);
    row(
        h,
        &[
            "precision".into(),
            share_with_interval(t.precision, t.precision_interval),
        ],
    );
    row(
        h,
        &[
            "recall".into(),
            share_with_interval(t.recall, t.recall_interval),
        ],
    );
    row(
        h,
        &[
            "false-alarm rate".into(),
            share_with_interval(t.false_alarm_rate, t.false_alarm_interval),
        ],
    );
    h.push_str("</tbody></table>\n");
}

/// The table of a decision section, by its heading.
fn decision_table(d: &DecisionView, heading: &str) -> Option<String> {
    let yes = &d.positive_class;
    let mut h = String::new();
    if heading.starts_with("CATCH BY RANK") {
        let c = d.catch_by_rank.as_ref()?;
        head(
            &mut h,
            &[
                "top rows",
                "rows",
                "caught",
                "share caught (95% interval)",
                "lift",
                "at random",
            ],
        );
        for p in &c.points {
            row(
                &mut h,
                &[
                    pct(p.top_share),
                    p.top_rows.to_string(),
                    p.caught.to_string(),
                    share_with_interval(Some(p.caught_share), p.caught_interval),
                    format!("{:.1}", p.lift),
                    pct(p.top_share),
                ],
            );
        }
        h.push_str("</tbody></table>\n");
        let _ = writeln!(
            h,
            "<p class=\"source\">{} of {} rows are '{}'. Intervals: Wilson (1927).</p>",
            c.positives,
            c.rows,
            escape(yes)
        );
    } else if heading.starts_with("AT A CUT-OFF") {
        cutoff_table(&mut h, &d.at_cutoff, yes);
    } else if heading.starts_with("LOWEST EXPECTED COST") {
        let c = d.cost.as_ref()?;
        let _ = writeln!(
            h,
            "<p>Cut-off {} = {} / ({} + {}) (Elkan 2001, Theorem 1).</p>",
            trim_num(c.cutoff, 4),
            trim_num(c.false_alarm_cost, 4),
            trim_num(c.false_alarm_cost, 4),
            trim_num(c.miss_cost, 4)
        );
        cutoff_table(&mut h, &c.table, yes);
        head(&mut h, &["choice", "cost per row"]);
        row(&mut h, &["this cut-off".into(), sig(c.cost_per_row, 4)]);
        row(
            &mut h,
            &[
                format!("cut-off {}", sig(d.at_cutoff.cutoff, 3)),
                sig(c.cost_per_row_at_chosen_cutoff, 4),
            ],
        );
        row(
            &mut h,
            &["call no row".into(), sig(c.cost_per_row_calling_none, 4)],
        );
        row(
            &mut h,
            &["call every row".into(), sig(c.cost_per_row_calling_all, 4)],
        );
        h.push_str("</tbody></table>\n");
    } else if heading.starts_with("DO THE PROBABILITIES") {
        let r = d.calibration.as_ref()?;
        head(
            &mut h,
            &[
                "bin",
                "rows",
                "scores",
                "promised",
                "observed (95% interval)",
            ],
        );
        for (k, b) in r.bins.iter().enumerate() {
            row(
                &mut h,
                &[
                    (k + 1).to_string(),
                    b.rows.to_string(),
                    format!("{:.3} to {:.3}", b.score_low, b.score_high),
                    pct(b.mean_score),
                    share_with_interval(Some(b.observed_share), b.observed_interval),
                ],
            );
        }
        h.push_str("</tbody></table>\n");
        let _ = writeln!(
            h,
            "<p class=\"source\">Brier score {}; binned {} = reliability {} &#8722; resolution {} + \
             uncertainty {} (Murphy 1973). No skill: {}.</p>",
            sig(r.brier, 4),
            sig(r.brier_binned, 4),
            sig(r.reliability, 3),
            sig(r.resolution, 3),
            sig(r.uncertainty, 4),
            sig(r.uncertainty, 4)
        );
    } else {
        return None;
    }
    Some(h)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sections_split_at_unindented_lines() {
        let (title, s) = sections("copse report\n\nDATA\n  a\n\nCAUTION\n  b\n");
        assert_eq!(title, "copse report");
        assert_eq!(
            s,
            vec![
                Section {
                    heading: "DATA",
                    body: vec!["  a"]
                },
                Section {
                    heading: "CAUTION",
                    body: vec!["  b"]
                }
            ]
        );
        assert_eq!(escape("a<b & 'c'"), "a&lt;b &amp; &#39;c&#39;");
        assert_eq!(anchor(0, "CATCH BY RANK (x)"), "s1-catch-by-rank");
    }
}
