//! The library and the command write the same model files: a Rust user who reads a
//! file with copse-data, trains with copse-forest and saves gets the bytes `copse
//! train` writes for the same file and settings, and each reads the other's file.
use super::{copse_in, expect_code, repo, tmp};
use copse_data::{Roles, TrainingTable};
use copse_forest::{Forest, ForestSettings};

/// Trains `data` (a repository file) on `target` with 40 trees and seed 5 both ways
/// and compares the model files byte for byte.
fn same_bytes_both_ways(data: &str, target: &str, ignore: &[&str]) {
    let dir = tmp();
    let path = repo(data);
    let path = path.to_str().expect("utf-8 path");
    let mut args = vec![
        "train",
        "--data",
        path,
        "--target",
        target,
        "--out",
        "cli.copse",
        "--trees",
        "40",
        "--seed",
        "5",
    ];
    let ignored = ignore.join(",");
    if !ignore.is_empty() {
        args.extend(["--ignore", &ignored]);
    }
    let out = copse_in(dir.path(), &args, None);
    expect_code(&out, 0);
    let cli = std::fs::read(dir.path().join("cli.copse")).expect("the command's model");

    let roles = Roles {
        ignore: ignore.iter().map(|c| c.to_string()).collect(),
        ..Roles::target(target)
    };
    let table = TrainingTable::read_csv(path, &roles).expect("the file reads");
    let settings = ForestSettings {
        trees: 40,
        seed: 5,
        ..ForestSettings::default()
    };
    let forest = table
        .train(&settings, &Default::default())
        .expect("training succeeds")
        .forest;
    let lib_path = dir.path().join("lib.copse");
    forest.save(&lib_path).expect("the model saves");
    let lib = std::fs::read(&lib_path).expect("the library's model");
    assert!(
        cli == lib,
        "{data}: the library's model file ({} bytes) differs from the command's ({} bytes)",
        lib.len(),
        cli.len()
    );

    // Each reads the other's file: the library loads the command's model, and the
    // command scores with the library's.
    assert_eq!(
        Forest::load(dir.path().join("cli.copse")).expect("loads"),
        forest
    );
    let scored = copse_in(
        dir.path(),
        &["score", "--model", "lib.copse", "--data", path],
        None,
    );
    let (so, _) = expect_code(&scored, 0);
    assert_eq!(
        so.lines().count(),
        table.rows_read + 1,
        "a line per row plus the header"
    );
}

/// The invented demo register: two classes, categorical inputs, missing cells.
#[test]
fn library_and_command_write_the_same_model_for_the_demo_data() {
    same_bytes_both_ways(
        "demo-data/water_mains.csv",
        "failed_within_year",
        &["segment_id"],
    );
}

/// Iris (Fisher 1936): three classes, numeric inputs.
#[test]
fn library_and_command_write_the_same_model_for_iris() {
    same_bytes_both_ways("tests/data/iris.csv", "species", &[]);
}

/// Penguins (Gorman, Williams & Fraser 2014): a regression with categorical inputs
/// and rows whose outcome is missing.
#[test]
fn library_and_command_write_the_same_model_for_a_regression() {
    same_bytes_both_ways("tests/data/penguins.csv", "body_mass_g", &[]);
}

/// Numeric class labels are ordered by value in the library as in the command (the
/// engine once sorted them as text, so "10" came before "9").
#[test]
fn numeric_class_labels_take_the_same_order_everywhere() {
    let labels = ["9", "10", "2", "10", "9"];
    let outcome = copse_forest::Outcome::from_labels(labels.iter().map(Some));
    let copse_forest::Outcome::Classes { labels, .. } = outcome else {
        panic!("class labels give classes");
    };
    assert_eq!(labels, ["2", "9", "10"]);

    let dir = tmp();
    let mut csv = String::from("x,grade\n");
    for i in 0..30 {
        csv.push_str(&format!("{i},{}\n", [9, 10, 2][i % 3]));
    }
    let path = dir.path().join("grades.csv");
    std::fs::write(&path, csv).expect("written");
    let roles = Roles {
        task: Some(copse_forest::Task::Classify),
        ..Roles::target("grade")
    };
    let table = TrainingTable::read_csv(&path, &roles).expect("reads");
    assert_eq!(table.classes(), ["2", "9", "10"]);
}
