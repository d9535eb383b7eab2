//! The printed table: sections of rows (figure, ours, limit, ours/limit, goal) and
//! notes, under a heading that names the machine and its load.
use crate::config::{cores, Config};
use crate::machine::{cpu_model, load_average};
use std::fmt::Write as _;
use std::time::Duration;

/// The printed table: figure, ours, limit, ours/limit, goal.
pub struct Table {
    lines: Vec<Line>,
    load_start: String,
}

enum Line {
    Section(String),
    Row {
        figure: String,
        ours: String,
        limit: String,
        ratio: String,
        goal: String,
    },
    Note(String),
}

impl Table {
    /// An empty table that records the load average at the start of the run.
    pub fn new() -> Self {
        Table {
            lines: Vec::new(),
            load_start: load_average(),
        }
    }

    pub fn section(&mut self, s: &str) {
        self.lines.push(Line::Section(s.to_string()));
    }
    pub fn note(&mut self, s: &str) {
        self.lines.push(Line::Note(s.to_string()));
    }
    pub fn row(&mut self, figure: &str, ours: String, limit: String, goal: &str) {
        self.lines.push(Line::Row {
            figure: figure.to_string(),
            ours,
            limit,
            ratio: String::new(),
            goal: goal.to_string(),
        });
    }
    pub fn ratio_row(&mut self, figure: &str, ours: f64, limit: f64, goal: &str) {
        self.lines.push(Line::Row {
            figure: figure.to_string(),
            ours: num(ours),
            limit: num(limit),
            ratio: format!("{:.2}", ours / limit),
            goal: goal.to_string(),
        });
    }

    pub fn render(&self, cfg: &Config) -> String {
        let mut s = String::new();
        let _ = writeln!(
            s,
            "\ncopse workloads | machine: {} | cores: {} | all threads = {} | scale {}",
            cpu_model(),
            cores(),
            cfg.threads,
            cfg.scale
        );
        let _ = writeln!(
            s,
            "load average (1, 5, 15 min) at start: {} | at end: {} (other work on the \
             machine slows every figure, and the speed-ups most)",
            self.load_start,
            load_average()
        );
        let w = 58;
        let _ = writeln!(
            s,
            "{:<w$} {:>12} {:>12} {:>10}  goal (issue 5 unless marked)",
            "figure", "ours", "limit", "ours/limit"
        );
        for l in &self.lines {
            match l {
                Line::Section(t) => {
                    let _ = writeln!(s, "\n== {t}");
                }
                Line::Note(t) => {
                    let _ = writeln!(s, "   ({t})");
                }
                Line::Row {
                    figure,
                    ours,
                    limit,
                    ratio,
                    goal,
                } => {
                    let _ = writeln!(s, "{figure:<w$} {ours:>12} {limit:>12} {ratio:>10}  {goal}");
                }
            }
        }
        s
    }
}

fn num(v: f64) -> String {
    if v.abs() >= 1000.0 {
        format!("{v:.0}")
    } else if v.abs() >= 10.0 {
        format!("{v:.1}")
    } else {
        format!("{v:.2}")
    }
}

pub fn fmt_s(d: Duration) -> String {
    format!("{:.2}", d.as_secs_f64())
}

pub fn fmt_rate(r: f64) -> String {
    format!("{:.0}", r)
}
