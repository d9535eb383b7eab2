//! A training table: a whole file read into memory with its column kinds inferred,
//! the outcome encoded, and remarks a careful analyst would want to see; and training
//! a forest on it, so the model file records where its rows came from.
use crate::cells::{read_number, Missing};
use crate::csv_input::{CsvInput, Delimiter};
use crate::error::{Error, ErrorKind, Result};
use crate::infer::{self, line_of, ColumnTally, Levels};
use crate::roles::{lay_out, Layout, Roles};
use crate::row_roles;
use copse_forest::{
    DecimalMark, FeatureKind, FeatureMeta, Forest, ForestSettings, GroupsRecord, ModelCard,
    Outcome, Task, TrainOptions, Trained, WeightsRecord,
};
use ndarray::Array2;
use std::collections::HashMap;

/// Most categories one input may have (category codes are 16 bits in the tree core).
pub const MAX_CATEGORIES: usize = 65535;

/// A training file read into memory.
#[derive(Debug, Clone)]
pub struct TrainingTable {
    /// The file's name as used in messages.
    pub source: String,
    /// Inputs in model order, with their kinds and category labels.
    pub features: Vec<FeatureMeta>,
    /// Name of the outcome column.
    pub target: String,
    /// Classification or regression.
    pub task: Task,
    /// Missing-value tokens in force.
    pub missing: Missing,
    /// The decimal mark the file's numbers were read with.
    pub decimal: DecimalMark,
    /// Inputs, rows by inputs: numbers, category codes, NaN for missing.
    pub x: Array2<f64>,
    /// Outcome of each row (class labels in natural order).
    pub outcome: Outcome,
    /// File line of each row (for per-row output).
    pub lines: Vec<u64>,
    /// Rows read from the file (including those left out for a missing outcome).
    pub rows_read: usize,
    /// Rows left out because their outcome is missing.
    pub rows_without_outcome: usize,
    /// Columns left out by the roles.
    pub ignored: Vec<String>,
    /// Remarks about the data for the user.
    pub notes: Vec<String>,
    /// The case weights column and each row's weight, if one was given.
    pub weights: Option<(String, Vec<f64>)>,
    /// The group column and each row's group number (labels numbered in order of
    /// first appearance), if one was given.
    pub groups: Option<(String, Vec<u32>)>,
}

impl TrainingTable {
    /// Missing cells of each input among the rows used for training (the rows with a
    /// target value), in model order.
    ///
    /// # Example
    /// ```
    /// use copse_data::{CsvInput, Delimiter, Missing, Roles, TrainingTable};
    /// let csv = "a,b,y\n1,NA,p\n,2,q\n3,4,p\nNaN,5,NA\n";
    /// let input = CsvInput::from_reader("d.csv".into(), Box::new(csv.as_bytes()), None, Delimiter::Comma)?;
    /// let t = TrainingTable::from_csv(input, &Roles::target("y"), Missing::standard())?;
    /// // The last row has no target, so its cells are not counted.
    /// assert_eq!(t.missing_cells(), vec![1, 1]);
    /// # Ok::<(), copse_data::Error>(())
    /// ```
    pub fn missing_cells(&self) -> Vec<usize> {
        self.x
            .columns()
            .into_iter()
            .map(|c| c.iter().filter(|v| v.is_nan()).count())
            .collect()
    }

    /// Reads the comma-separated file at `path` with the standard missing tokens.
    ///
    /// # Errors
    /// As for [`TrainingTable::from_csv`], and `Unreadable` when the file cannot be
    /// opened.
    ///
    /// # Example
    /// ```
    /// use copse_data::{Roles, TrainingTable};
    /// # let dir = std::env::temp_dir().join("copse-data-doc-read");
    /// # std::fs::create_dir_all(&dir).unwrap();
    /// # let path = dir.join("pipes.csv");
    /// # std::fs::write(&path, "age,material,burst\n40,iron,yes\n5,pvc,no\n52,iron,yes\n9,pvc,no\n").unwrap();
    /// let table = TrainingTable::read_csv(&path, &Roles::target("burst"))?;
    /// assert_eq!(table.classes(), ["no", "yes"]);
    /// assert_eq!(table.x.dim(), (4, 2));
    /// # Ok::<(), copse_data::Error>(())
    /// ```
    pub fn read_csv(path: impl AsRef<std::path::Path>, roles: &Roles) -> Result<TrainingTable> {
        let path = path.as_ref().to_string_lossy();
        let input = CsvInput::open(&path, Delimiter::Comma)?;
        TrainingTable::from_csv(input, roles, Missing::standard())
    }

    /// Reads every row of `input`, infers column kinds, and encodes it.
    ///
    /// # Errors
    /// `Columns` for unknown column names, contradictory roles or too many
    /// categories; `NoRows` for a file with no rows or an outcome that is always
    /// missing; `BadValue` for a `--numeric` column holding text or a regression
    /// outcome holding text or huge values; each names the file, line and column.
    pub fn from_csv(mut input: CsvInput, roles: &Roles, missing: Missing) -> Result<TrainingTable> {
        // A typed source's text columns are categories, whatever their values look like.
        let mut typed = roles.clone();
        for c in input.text_columns() {
            let named = |list: &[String]| list.iter().any(|n| n == c);
            if *c != roles.target && !named(&roles.numeric) && !named(&roles.ignore) {
                typed.categorical.push(c.clone());
            }
        }
        let roles = &typed;
        let layout = lay_out(&input, roles)?;
        let name = input.name().to_string();
        let place = input.place().clone();
        let headers = input.headers().to_vec();
        let mark = input.decimal();
        let (records, tallies) = infer::tally(&mut input, &layout, &missing)?;
        let n_read = records.len();
        let mut notes: Vec<String> = input.blank_lines_note().into_iter().collect();
        let mut categorical = infer::kinds(&place, &headers, &layout, &tallies, roles, &mut notes)?;
        let tc = layout.target;
        let mut task = infer::task(&place, roles, &tallies[tc], categorical[tc], n_read)?;
        if roles.task.is_none() && task == Task::Regress {
            let distinct = infer::distinct_numbers(&records, tc, &missing, mark, infer::FEW_CODES);
            let (read_as, note) = infer::numeric_outcome(&roles.target, &distinct);
            task = read_as;
            notes.extend(note);
        }
        categorical[tc] = task == Task::Classify;
        if task == Task::Regress {
            infer::check_target_size(&records, tc, &missing, mark, &place, &roles.target)?;
        }
        let mut levels = infer::levels(
            &records,
            &layout,
            &categorical,
            &missing,
            &headers,
            &mut notes,
        );
        let rows = encode_rows(&records, &layout, &levels, task, &missing, mark);
        let kept: Vec<&csv::StringRecord> = records
            .iter()
            .filter(|r| !missing.is_missing(r[tc].trim()))
            .collect();
        let weights = match (layout.weights, &roles.weights) {
            (Some(j), Some(c)) => Some((
                c.clone(),
                row_roles::read_weights(&place, &kept, j, c, &missing, mark)?,
            )),
            _ => None,
        };
        let groups = match (layout.group, &roles.group) {
            (Some(j), Some(c)) => Some((
                c.clone(),
                row_roles::read_groups(&place, &kept, j, c, &missing)?,
            )),
            _ => None,
        };
        drop(kept);
        drop(records);

        let features: Vec<FeatureMeta> = layout
            .inputs
            .iter()
            .map(|&j| match levels.remove(&j) {
                Some(l) => FeatureMeta::categorical(headers[j].clone(), l.labels),
                None => FeatureMeta::numeric(headers[j].clone()),
            })
            .collect();
        let labels = levels.remove(&tc).map(|l| l.labels).unwrap_or_default();
        check_category_counts(&name, &features)?;
        let outcome = match task {
            Task::Classify => Outcome::Classes {
                codes: rows.classes,
                labels,
            },
            Task::Regress => Outcome::Values(rows.values),
        };
        let mut table = TrainingTable {
            source: name,
            features,
            target: roles.target.clone(),
            task,
            missing,
            decimal: mark,
            x: rows.x,
            outcome,
            lines: rows.lines,
            rows_read: n_read,
            rows_without_outcome: n_read - rows.kept,
            ignored: roles.ignore.clone(),
            notes,
            weights,
            groups,
        };
        table.remark(&tallies, &layout);
        if rows.kept < 2 {
            return Err(Error::new(
                ErrorKind::NoRows,
                format!(
                    "{} has {} with a target value; at least two are needed to grow a model",
                    table.source,
                    if rows.kept == 0 {
                        "no row"
                    } else {
                        "only one row"
                    }
                ),
            ));
        }
        Ok(table)
    }

    /// Class labels in model order (empty for regression).
    pub fn classes(&self) -> &[String] {
        match &self.outcome {
            Outcome::Classes { labels, .. } => labels,
            Outcome::Values(_) => &[],
        }
    }

    /// The model card of `forest` (trained on this table) with this table's source
    /// recorded: file name, outcome column, missing tokens, decimal mark, rows read
    /// and left out, ignored columns, and the remarks about the data.
    pub fn card_for(&self, forest: &Forest) -> ModelCard {
        self.card_over(forest.card())
    }

    /// `base` (the engine's card) with this table's source recorded.
    pub(crate) fn card_over(&self, base: &ModelCard) -> ModelCard {
        ModelCard {
            target: self.target.clone(),
            missing_tokens: self.missing.tokens().to_vec(),
            source: self.source.clone(),
            rows_read: self.rows_read,
            rows_without_outcome: self.rows_without_outcome,
            ignored: self.ignored.clone(),
            notes: self.notes.clone(),
            decimal_mark: self.decimal,
            weights: self.weights.as_ref().map(|(column, w)| WeightsRecord {
                column: column.clone(),
                total: w.iter().sum(),
                zero_rows: w.iter().filter(|&&v| v == 0.0).count(),
            }),
            groups: base.groups.clone().map(|g| GroupsRecord {
                column: self.groups.as_ref().map_or(g.column, |(c, _)| c.clone()),
                ..g
            }),
            ..base.clone()
        }
    }

    /// `options` with the table's case weights and row groups, when it has them: the
    /// ones a model of this table is trained with.
    pub(crate) fn row_options<'a>(&'a self, options: &TrainOptions<'a>) -> TrainOptions<'a> {
        TrainOptions {
            case_weights: self
                .weights
                .as_ref()
                .map(|(_, w)| w.as_slice())
                .or(options.case_weights),
            groups: self
                .groups
                .as_ref()
                .map(|(_, g)| g.as_slice())
                .or(options.groups),
            ..*options
        }
    }

    /// Trains a forest on this table and records the table in its model card; the
    /// model file it saves is the one `copse train` writes for the same file and
    /// settings.
    ///
    /// # Errors
    /// As for [`Forest::train`].
    ///
    /// # Example
    /// ```
    /// use copse_data::{Roles, TrainingTable};
    /// use copse_forest::ForestSettings;
    /// # let dir = std::env::temp_dir().join("copse-data-doc-train");
    /// # std::fs::create_dir_all(&dir).unwrap();
    /// # let path = dir.join("pipes.csv");
    /// # let mut text = String::from("age,material,burst\n");
    /// # for i in 0..60 { text.push_str(&format!("{},{},{}\n", i, if i % 3 == 0 { "pvc" } else { "iron" }, if i > 30 { "yes" } else { "no" })); }
    /// # std::fs::write(&path, text).unwrap();
    /// let table = TrainingTable::read_csv(&path, &Roles::target("burst"))?;
    /// let settings = ForestSettings { trees: 20, ..Default::default() };
    /// let trained = table.train(&settings, &Default::default())?;
    /// assert_eq!(trained.forest.card().source, path.to_string_lossy());
    /// # Ok::<(), Box<dyn std::error::Error>>(())
    /// ```
    pub fn train(
        &self,
        settings: &ForestSettings,
        options: &TrainOptions<'_>,
    ) -> copse_forest::Result<Trained> {
        let options = self.row_options(options);
        let mut trained = Forest::train(
            self.x.view(),
            &self.features,
            &self.outcome,
            settings,
            &options,
        )?;
        let card = self.card_for(&trained.forest);
        trained.forest.set_card(card)?;
        Ok(trained)
    }

    /// Adds the remarks a careful analyst would want to see: useless or
    /// identifier-like inputs, a single class, rows left out for a missing outcome.
    fn remark(&mut self, tallies: &[ColumnTally], layout: &Layout) {
        let n_read = self.rows_read;
        let mut useless = 0;
        for (k, f) in self.features.iter().enumerate() {
            let present = n_read - tallies[layout.inputs[k]].missing;
            let same = "has the same value in every row; it cannot help the model";
            let note = if present == 0 {
                Some((
                    true,
                    "is missing in every row; it cannot help the model".to_string(),
                ))
            } else if let FeatureKind::Categorical { levels } = &f.kind {
                if levels.len() == 1 {
                    Some((true, same.to_string()))
                } else if present >= 20 && levels.len() == present {
                    Some((false, format!(
                        "has a different value in each of its {present} rows; it looks like an \
                         identifier and cannot carry over to new rows: leave it out with --ignore {}",
                        f.name
                    )))
                } else {
                    None
                }
            } else {
                let col = self.x.column(k);
                let mut vals = col.iter().filter(|v| !v.is_nan());
                let first = vals.next();
                first
                    .filter(|&first| vals.all(|v| v == first))
                    .map(|_| (true, same.to_string()))
            };
            if let Some((is_useless, what)) = note {
                useless += usize::from(is_useless);
                self.notes.push(format!("input '{}' {what}", f.name));
            }
        }
        let target = &self.target;
        if useless == self.features.len() {
            self.notes.push(format!(
                "no input of {} varies, so no split is possible: the model is trivial and predicts the \
                 overall {} for every row; check --target and --ignore, and the data",
                self.source,
                match self.task {
                    Task::Classify => "class shares",
                    Task::Regress => "mean",
                }
            ));
        }
        if let [only] = self.classes() {
            self.notes.push(format!(
                "the target '{target}' has a single class '{only}': the model is trivial and predicts it for every row"
            ));
        }
        let dropped = self.rows_without_outcome;
        if dropped > 0 {
            let rows = if n_read == 1 { "row" } else { "rows" };
            let (have, are) = if dropped == 1 {
                ("has", "is")
            } else {
                ("have", "are")
            };
            self.notes.push(format!(
                "{dropped} of {n_read} {rows} {have} no value for the target '{target}' and {are} left \
                 out of training"
            ));
        }
        self.remark_row_roles();
    }

    /// Remarks about case weights (rows of weight 0, weights far from counts) and, when
    /// no group column was given, about many rows that repeat another row's inputs.
    fn remark_row_roles(&mut self) {
        let rows = self.x.nrows();
        if let Some((col, w)) = &self.weights {
            let zero = w.iter().filter(|&&v| v == 0.0).count();
            if zero > 0 {
                self.notes.push(format!(
                    "{zero} of {rows} rows have case weight 0 in '{col}': no tree draws them and \
                     every figure counts them with weight 0"
                ));
            }
            let total: f64 = w.iter().sum();
            let mean = total / rows.max(1) as f64;
            if !(0.1..=10.0).contains(&mean) {
                self.notes.push(format!(
                    "the case weights in '{col}' average {mean:.3}; a weight counts cases, so each \
                     tree draws as many cases as they add up to ({total:.0}); unless they are \
                     counts, scale them to average about 1"
                ));
            }
        }
        if self.groups.is_none() {
            let repeated = row_roles::rows_with_repeated_inputs(self.x.view());
            self.notes
                .extend(row_roles::repeated_inputs_note(repeated, rows));
        }
    }
}

/// The rows that have an outcome, encoded.
struct Rows {
    x: Array2<f64>,
    lines: Vec<u64>,
    classes: Vec<u32>,
    values: Vec<f64>,
    kept: usize,
}

/// Pass 2: encodes the rows that have an outcome.
fn encode_rows(
    records: &[csv::StringRecord],
    layout: &Layout,
    levels: &HashMap<usize, Levels>,
    task: Task,
    missing: &Missing,
    mark: DecimalMark,
) -> Rows {
    let tc = layout.target;
    let keep: Vec<&csv::StringRecord> = records
        .iter()
        .filter(|r| !missing.is_missing(r[tc].trim()))
        .collect();
    let mut x = Array2::<f64>::from_elem((keep.len(), layout.inputs.len()), f64::NAN);
    let mut lines = Vec::with_capacity(keep.len());
    let (mut classes, mut values) = (Vec::new(), Vec::new());
    for (row, r) in keep.iter().enumerate() {
        lines.push(line_of(r));
        for (k, &j) in layout.inputs.iter().enumerate() {
            let cell = r[j].trim();
            if missing.is_missing(cell) {
                continue;
            }
            x[[row, k]] = match levels.get(&j) {
                Some(l) => l.codes.get(cell).map_or(f64::NAN, |&c| f64::from(c)),
                None => read_number(cell, mark).unwrap_or(f64::NAN),
            };
        }
        let cell = r[tc].trim();
        match task {
            Task::Classify => classes.push(
                levels
                    .get(&tc)
                    .and_then(|l| l.codes.get(cell).copied())
                    .unwrap_or(u32::MAX),
            ),
            Task::Regress => values.push(read_number(cell, mark).unwrap_or(f64::NAN)),
        }
    }
    Rows {
        x,
        lines,
        classes,
        values,
        kept: keep.len(),
    }
}

/// Category codes are 16 bits in the tree core (65535 at most per input); a column
/// with more is an identifier or free text, not a category.
fn check_category_counts(name: &str, features: &[FeatureMeta]) -> Result<()> {
    for f in features {
        if let FeatureKind::Categorical { levels } = &f.kind {
            if levels.len() > MAX_CATEGORIES {
                return Err(Error::new(
                    ErrorKind::Columns,
                    format!(
                        "{name}, column '{}': {} different values read as categories, more than the {MAX_CATEGORIES} \
                         copse supports in one input; it looks like an identifier or free text: leave it out with \
                         --ignore {}, or group its values into fewer categories",
                        f.name,
                        levels.len(),
                        f.name
                    ),
                ));
            }
        }
    }
    Ok(())
}
