//! `copse score` on rows outside the training ranges: the warning on standard error and
//! the `--flag-unfamiliar` column. Data: iris (Fisher 1936), whose petal lengths run
//! from 1.0 to 6.9 cm, so 99 and -5 lie outside them.
use super::*;

/// Writes `rows` rows of iris (without the species) to `name` in `dir`, with the
/// petal length of the given rows replaced.
fn iris_rows(dir: &Path, name: &str, rows: usize, replace: &[(usize, &str)]) {
    let all = read_csv(&std::fs::read(repo("tests/data/iris.csv")).expect("iris"));
    let mut text = String::from("sepal_length,sepal_width,petal_length,petal_width\n");
    // Every eighth row, so the rows span the three species.
    for (i, row) in all[1..].iter().step_by(8).take(rows).enumerate() {
        let mut row = row[..4].to_vec();
        if let Some((_, v)) = replace.iter().find(|(r, _)| *r == i) {
            row[2] = (*v).to_string();
        }
        text.push_str(&row.join(","));
        text.push('\n');
    }
    std::fs::write(dir.join(name), text).expect("rows written");
}

fn score(dir: &Path, data: &str, extra: &[&str]) -> (Vec<Vec<String>>, String) {
    let mut args = vec!["score", "--model", "iris.copse", "--data", data];
    args.extend_from_slice(extra);
    let (so, se) = expect_code(&copse_in(dir, &args, None), 0);
    (read_csv(so.as_bytes()), se)
}

#[test]
fn rows_outside_the_training_range_are_counted_and_flagged() {
    let dir = tmp();
    expect_code(&train_iris(dir.path(), &[]), 0);
    iris_rows(dir.path(), "plain.csv", 12, &[]);
    iris_rows(dir.path(), "odd.csv", 12, &[(3, "99"), (7, "-5")]);

    // Rows from the training data draw no warning, and no row is flagged.
    let (plain, se) = score(dir.path(), "plain.csv", &["--flag-unfamiliar"]);
    assert!(!se.contains("outside"), "{se}");
    assert!(plain[1..]
        .iter()
        .all(|r| r.last().map(String::as_str) == Some("0")));

    let (without, se) = score(dir.path(), "odd.csv", &[]);
    assert!(
        se.contains("2 of 12 rows hold values outside")
            && se.contains("2 cells of 'petal_length' (trained on 1 to 6.9; such as 99, -5)")
            && se.contains("a forest extrapolates flat"),
        "{se}"
    );
    // Only petal_length is named.
    for other in ["sepal_length", "sepal_width", "petal_width"] {
        assert!(!se.contains(&format!("'{other}'")), "{se}");
    }
    assert_eq!(
        se.matches("extrapolates flat").count(),
        1,
        "warned once: {se}"
    );

    let (with, se_flag) = score(dir.path(), "odd.csv", &["--flag-unfamiliar"]);
    assert!(se_flag.contains("2 cells of 'petal_length'"), "{se_flag}");
    assert_eq!(with[0].last().map(String::as_str), Some("unfamiliar"));
    assert_eq!(with.len(), 13);
    let flagged: Vec<usize> = with[1..]
        .iter()
        .enumerate()
        .filter(|(_, r)| r.last().map(String::as_str) == Some("1"))
        .map(|(i, _)| i)
        .collect();
    assert_eq!(flagged, [3, 7]);
    assert!(with[1..]
        .iter()
        .all(|r| matches!(r.last().map(String::as_str), Some("0" | "1"))));
    // Every other column is as without the flag.
    for (w, o) in with.iter().zip(&without) {
        assert_eq!(&w[..w.len() - 1], &o[..]);
    }
}
