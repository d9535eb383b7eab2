//! The words some options take (delimiter, decimal mark, task, impurity, cuts), each turned
//! into the library's own type.
use clap::ValueEnum;
use copse_data::Delimiter;
use copse_forest::{CutChoice, Impurity, Task};

/// Field separators.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum DelimiterArg {
    /// `,`
    Comma,
    /// a tab character
    Tab,
    /// `;`
    Semicolon,
}

impl From<DelimiterArg> for Delimiter {
    fn from(d: DelimiterArg) -> Self {
        match d {
            DelimiterArg::Comma => Delimiter::Comma,
            DelimiterArg::Tab => Delimiter::Tab,
            DelimiterArg::Semicolon => Delimiter::Semicolon,
        }
    }
}

/// Decimal marks.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum DecimalArg {
    /// `5.1`
    Point,
    /// `5,1`
    Comma,
}

impl From<DecimalArg> for copse_data::DecimalMark {
    fn from(d: DecimalArg) -> Self {
        match d {
            DecimalArg::Point => copse_data::DecimalMark::Point,
            DecimalArg::Comma => copse_data::DecimalMark::Comma,
        }
    }
}

/// Task override.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum TaskArg {
    /// Predict a class label.
    Classify,
    /// Predict a number.
    Regress,
}

impl From<TaskArg> for Task {
    fn from(t: TaskArg) -> Self {
        match t {
            TaskArg::Classify => Task::Classify,
            TaskArg::Regress => Task::Regress,
        }
    }
}

/// Impurity measure.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ImpurityArg {
    /// Gini impurity.
    Gini,
    /// Entropy (information).
    Entropy,
}

impl From<ImpurityArg> for Impurity {
    fn from(i: ImpurityArg) -> Self {
        match i {
            ImpurityArg::Gini => Impurity::Gini,
            ImpurityArg::Entropy => Impurity::Entropy,
        }
    }
}

/// How the cut point is chosen on each input tried.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum CutsArg {
    /// The best cut of each input (the usual search).
    Best,
    /// One cut drawn at random per input; the best of those is kept (randomized cut
    /// points).
    Random,
}

impl From<CutsArg> for CutChoice {
    fn from(c: CutsArg) -> Self {
        match c {
            CutsArg::Best => CutChoice::Best,
            CutsArg::Random => CutChoice::Random,
        }
    }
}

/// How `copse score` writes its rows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum OutFormat {
    /// Comma-separated values with a header row (unless --omit-header).
    Csv,
    /// One JSON object per line.
    JsonLines,
    /// A Parquet file (needs --out FILE), one row group per block of rows.
    Parquet,
}
