//! `copse explain`: its columns for values, two classes and three classes, rows in
//! input order across blocks, the reasons in words (category labels, missing cells),
//! the parts adding up to what `copse score` writes, and bad input. Data: the invented
//! demo register, penguins (Gorman, Williams & Fraser 2014) and iris (Fisher 1936).
use super::*;

/// Runs `copse explain` in `dir` and returns the CSV rows (header first) and stderr.
fn explain(dir: &Path, model: &str, data: &str, extra: &[&str]) -> (Vec<Vec<String>>, String) {
    let mut args = vec!["explain", "--model", model, "--data", data];
    args.extend_from_slice(extra);
    let (so, se) = expect_code(&copse_in(dir, &args, None), 0);
    (read_csv(so.as_bytes()), se)
}

/// Runs `copse score` in `dir` and returns the CSV rows.
fn score(dir: &Path, model: &str, data: &str) -> Vec<Vec<String>> {
    let args = ["score", "--model", model, "--data", data];
    let (so, _) = expect_code(&copse_in(dir, &args, None), 0);
    read_csv(so.as_bytes())
}

/// The column of `rows` named `name`, parsed, one value per data row.
fn column(rows: &[Vec<String>], name: &str) -> Vec<f64> {
    let at = rows[0]
        .iter()
        .position(|h| h == name)
        .unwrap_or_else(|| panic!("no column {name} in {:?}", rows[0]));
    rows[1..]
        .iter()
        .map(|r| r[at].parse().expect("a number"))
        .collect()
}

/// Checks, row by row, that the printed base plus the printed parts equals the
/// printed `want`. Each printed number is rounded to `step` (half a step off at most),
/// so the sum of `inputs + 2` of them is off by at most `(inputs + 2) step / 2`.
fn assert_adds_up(rows: &[Vec<String>], base: &str, parts: &[String], want: &[f64], step: f64) {
    let base = column(rows, base);
    let parts: Vec<Vec<f64>> = parts.iter().map(|p| column(rows, p)).collect();
    let slack = (parts.len() + 2) as f64 * step / 2.0;
    for (r, w) in want.iter().enumerate() {
        let sum = base[r] + parts.iter().map(|p| p[r]).sum::<f64>();
        assert!((sum - w).abs() <= slack, "row {r}: {sum} against {w}");
    }
}

fn train_demo(dir: &Path) {
    let data = repo("demo-data/water_mains.csv");
    let args = [
        "train",
        "--data",
        data.to_str().expect("utf-8 path"),
        "--target",
        "failed_within_year",
        "--ignore",
        "segment_id",
        "--out",
        "mains.copse",
        "--trees",
        "40",
        "--seed",
        "5",
    ];
    expect_code(&copse_in(dir, &args, None), 0);
}

#[test]
fn two_classes_explain_the_second_in_order_and_add_up_to_the_score() {
    let dir = tmp();
    train_demo(dir.path());
    let data = repo("demo-data/water_mains_to_score.csv");
    let data = data.to_str().expect("utf-8 path");
    // Blocks of 7 rows, so the 500 rows cross many blocks.
    let extra = ["--keep", "segment_id", "--top", "2", "--block-rows", "7"];
    let (rows, se) = explain(dir.path(), "mains.copse", data, &extra);
    assert!(se.contains("describe the model, not causes"), "{se}");
    let inputs = [
        "install_year",
        "material",
        "diameter_mm",
        "length_m",
        "pressure_kpa",
        "soil_corrosivity",
        "past_repairs",
        "valve_distance_m",
    ];
    let mut want: Vec<String> = ["segment_id", "prediction", "prob_yes", "base_yes"]
        .map(String::from)
        .to_vec();
    let parts: Vec<String> = inputs.iter().map(|i| format!("part_yes_{i}")).collect();
    want.extend(parts.iter().cloned());
    want.extend(["reason_1".to_string(), "reason_2".to_string()]);
    assert_eq!(rows[0], want);
    // Rows in input order: the ids as in the file.
    let input = read_csv(&std::fs::read(data).expect("demo rows"));
    assert_eq!(rows.len(), input.len());
    for (got, row) in rows[1..].iter().zip(&input[1..]) {
        assert_eq!(got[0], row[0]);
    }
    // The parts add up to the probability that `copse score` writes.
    let scored = score(dir.path(), "mains.copse", data);
    let prob = column(&scored, "prob_yes");
    assert_eq!(column(&rows, "prob_yes"), prob);
    assert_adds_up(&rows, "base_yes", &parts, &prob, 1e-6);
    // Reasons: the largest part first, in words, with category labels as read.
    let material = input[0]
        .iter()
        .position(|h| h == "material")
        .expect("material");
    let (mut labelled, mut missing) = (0, 0);
    for (r, row) in rows[1..].iter().enumerate() {
        let first = &row[row.len() - 2];
        let (j, part) = parts
            .iter()
            .enumerate()
            .map(|(j, p)| (j, column(&rows[..], p)[r]))
            .max_by(|a, b| a.1.abs().total_cmp(&b.1.abs()))
            .expect("parts");
        let way = if part > 0.0 { "raised" } else { "lowered" };
        // The cell as read, or "missing" for an empty one.
        let at = input[0].iter().position(|h| h == inputs[j]).expect("input");
        let cell = &input[r + 1][at];
        let start = if cell.is_empty() || cell == "NA" {
            missing += 1;
            format!("{} missing ", inputs[j])
        } else {
            format!("{} = ", inputs[j])
        };
        assert!(first.starts_with(&start), "row {r}: {first} ({cell:?})");
        assert!(
            first.contains(&format!(
                " {way} the chance that failed_within_year is yes by "
            )),
            "row {r}: {first}"
        );
        if j == 1 {
            assert!(first.starts_with(&format!("material = {} ", input[r + 1][material])));
            labelled += 1;
        }
    }
    // Both kinds of reason occur in the demo rows.
    assert!(labelled > 0 && missing > 0, "{labelled} {missing}");
}

#[test]
fn three_classes_give_a_set_per_class_and_name_missing_cells() {
    let dir = tmp();
    let p = penguins();
    let args = [
        "train",
        "--data",
        &p,
        "--target",
        "species",
        "--out",
        "peng.copse",
        "--trees",
        "40",
    ];
    expect_code(&copse_in(dir.path(), &args, None), 0);
    let (rows, _) = explain(dir.path(), "peng.copse", &p, &["--top", "9"]);
    let inputs = [
        "island",
        "bill_length_mm",
        "bill_depth_mm",
        "flipper_length_mm",
        "body_mass_g",
        "sex",
        "year",
    ];
    let classes = ["Adelie", "Chinstrap", "Gentoo"];
    let mut want = vec!["prediction".to_string()];
    for c in classes {
        want.push(format!("prob_{c}"));
        want.push(format!("base_{c}"));
        want.extend(inputs.iter().map(|i| format!("part_{c}_{i}")));
    }
    // --top beyond the inputs gives one reason per input.
    want.extend((1..=inputs.len()).map(|r| format!("reason_{r}")));
    assert_eq!(rows[0], want);
    let scored = score(dir.path(), "peng.copse", &p);
    for c in classes {
        let parts: Vec<String> = inputs.iter().map(|i| format!("part_{c}_{i}")).collect();
        let prob = column(&scored, &format!("prob_{c}"));
        assert_adds_up(&rows, &format!("base_{c}"), &parts, &prob, 1e-6);
    }
    // File line 5 (data row 4) holds NA in every measurement and in sex: its reasons
    // name missing cells, and speak of its predicted class.
    let row = &rows[4];
    let reasons: Vec<&String> = row[row.len() - inputs.len()..]
        .iter()
        .filter(|t| !t.is_empty())
        .collect();
    assert!(
        reasons.iter().any(|t| t.contains(" missing ")),
        "{reasons:?}"
    );
    assert!(
        reasons
            .iter()
            .all(|t| t.contains(&format!("the chance that species is {} by", row[0]))),
        "{reasons:?}"
    );
    // Islands are named by their labels.
    assert!(rows[1..]
        .iter()
        .any(|r| r.iter().any(|t| t.starts_with("island = Torgersen "))));
}

#[test]
fn values_add_up_to_the_scored_prediction() {
    let dir = tmp();
    let iris = repo("tests/data/iris.csv");
    let iris = iris.to_str().expect("utf-8 path");
    let args = [
        "train",
        "--data",
        iris,
        "--target",
        "sepal_length",
        "--out",
        "sl.copse",
        "--trees",
        "40",
    ];
    expect_code(&copse_in(dir.path(), &args, None), 0);
    let (rows, _) = explain(dir.path(), "sl.copse", iris, &["--top", "1"]);
    let inputs = ["sepal_width", "petal_length", "petal_width", "species"];
    let parts: Vec<String> = inputs.iter().map(|i| format!("part_{i}")).collect();
    let mut want = vec!["prediction".to_string(), "base".to_string()];
    want.extend(parts.iter().cloned());
    want.push("reason_1".to_string());
    assert_eq!(rows[0], want);
    let prediction = column(&score(dir.path(), "sl.copse", iris), "prediction");
    assert_eq!(column(&rows, "prediction"), prediction);
    // Sepal lengths of up to 7.9 cm are written with six significant digits: 5
    // decimals.
    assert_adds_up(&rows, "base", &parts, &prediction, 1e-5);
    assert!(rows[1][rows[0].len() - 1].contains("the predicted sepal_length by"));
}

#[test]
fn bad_rows_stop_with_the_line_named_and_no_output_file() {
    let dir = tmp();
    expect_code(&train_iris(dir.path(), &[]), 0);
    let mut data = String::from("sepal_length,sepal_width,petal_length,petal_width\n");
    for _ in 0..600 {
        data.push_str("5.1,3.5,1.4,0.2\n");
    }
    data.push_str("5.1,3.5,oops,0.2\n");
    std::fs::write(dir.path().join("bad.csv"), &data).expect("write");
    let args = [
        "explain",
        "--model",
        "iris.copse",
        "--data",
        "bad.csv",
        "--out",
        "out.csv",
        "--block-rows",
        "100",
    ];
    let (_, se) = expect_code(&copse_in(dir.path(), &args, None), 2);
    assert!(
        se.contains("bad.csv line 602, column 'petal_length'"),
        "{se}"
    );
    assert!(!dir.path().join("out.csv").exists());
    // With --blank-unscorable the row keeps its place with empty cells.
    let mut blank = args.to_vec();
    blank.push("--blank-unscorable");
    let (_, se) = expect_code(&copse_in(dir.path(), &blank, None), 0);
    assert!(se.contains("1 of 601 rows"), "{se}");
    let rows = read_csv(&std::fs::read(dir.path().join("out.csv")).expect("output"));
    assert_eq!(rows.len(), 602);
    assert!(rows[601].iter().all(String::is_empty));
    assert!(!rows[600][0].is_empty());
    // A missing column is named; a model trained with class balancing is refused.
    std::fs::write(dir.path().join("narrow.csv"), "sepal_length\n5.1\n").expect("write");
    let narrow = ["explain", "--model", "iris.copse", "--data", "narrow.csv"];
    let (so, se) = expect_code(&copse_in(dir.path(), &narrow, None), 2);
    assert!(so.is_empty() && se.contains("'petal_length'"), "{se}");
    let iris = repo("tests/data/iris.csv");
    let train = [
        "train",
        "--data",
        iris.to_str().expect("utf-8 path"),
        "--target",
        "species",
        "--out",
        "bal.copse",
        "--trees",
        "10",
        "--balanced",
    ];
    expect_code(&copse_in(dir.path(), &train, None), 0);
    let bal = ["explain", "--model", "bal.copse", "--data", "bad.csv"];
    let (so, se) = expect_code(&copse_in(dir.path(), &bal, None), 2);
    assert!(so.is_empty() && se.contains("class-balanced"), "{se}");
}

#[test]
fn the_importance_report_ranks_inputs_by_mean_absolute_part() {
    let dir = tmp();
    train_demo(dir.path());
    let data = repo("demo-data/water_mains.csv");
    let data = data.to_str().expect("utf-8 path");
    let args = [
        "importance",
        "--model",
        "mains.copse",
        "--data",
        data,
        "--repeats",
        "2",
    ];
    let (so, _) = expect_code(&copse_in(dir.path(), &args, None), 0);
    assert!(so.contains("HOW FAR EACH INPUT MOVES A PREDICTION"), "{so}");
    let mut json = args.to_vec();
    json.push("--json");
    let (so, _) = expect_code(&copse_in(dir.path(), &json, None), 0);
    let j = json_of(&so)["contribution_ranking"].clone();
    assert_eq!(
        (j["rows"].as_u64(), j["rows_given"].as_u64()),
        (Some(2000), Some(2000))
    );
    assert_eq!(j["output"], "class yes");
    let ranking = j["ranking"].as_array().expect("a ranking");
    assert_eq!(ranking.len(), 8);
    // The same figures as the mean of the absolute parts `copse explain` writes for
    // those rows, to the rounding of six decimals.
    let (rows, _) = explain(dir.path(), "mains.copse", data, &["--top", "0"]);
    let mut last = f64::INFINITY;
    for (i, r) in ranking.iter().enumerate() {
        assert_eq!(r["rank"].as_u64(), Some(i as u64 + 1));
        let mean = r["mean_abs"].as_f64().expect("a mean");
        assert!(mean <= last);
        last = mean;
        let name = r["feature"].as_str().expect("a name");
        let parts = column(&rows, &format!("part_yes_{name}"));
        let printed = parts.iter().map(|v| v.abs()).sum::<f64>() / parts.len() as f64;
        assert!(
            (printed - mean).abs() <= 5e-7,
            "{name}: {printed} against {mean}"
        );
    }
}
