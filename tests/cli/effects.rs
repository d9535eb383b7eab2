//! `copse effect`: the files it writes (CSV in long form, SVG charts), their columns
//! and grids, categorical inputs, pairs, the JSON summary, and its errors. Data: the
//! invented demo register in `demo-data/`, and small tables made here whose effects
//! are known by construction.
use super::*;

fn demo_model(dir: &Path) {
    let data = repo("demo-data/water_mains.csv");
    let args = [
        "train",
        "--data",
        data.to_str().expect("path"),
        "--target",
        "failed_within_year",
        "--ignore",
        "segment_id",
        "--out",
        "mains.copse",
        "--trees",
        "40",
        "-q",
    ];
    expect_code(&copse_in(dir, &args, None), 0);
}

fn effect(dir: &Path, extra: &[&str]) -> Output {
    let data = repo("demo-data/water_mains.csv");
    let mut args = vec![
        "effect",
        "--model",
        "mains.copse",
        "--data",
        data.to_str().expect("path"),
    ];
    args.extend_from_slice(extra);
    copse_in(dir, &args, None)
}

fn csv_file(path: &Path) -> Vec<Vec<String>> {
    read_csv(&std::fs::read(path).unwrap_or_else(|e| panic!("{}: {e}", path.display())))
}

#[test]
fn curves_and_heat_maps_are_written_with_their_columns_and_grids() {
    let dir = tmp();
    demo_model(dir.path());
    let out = effect(
        dir.path(),
        &[
            "--input",
            "install_year",
            "--input",
            "material",
            "--pair",
            "install_year,soil_corrosivity",
            "--grid",
            "8",
            "--curves",
            "5",
            "--out-dir",
            "out",
            "--json",
        ],
    );
    let (so, se) = expect_code(&out, 0);
    let j = json_of(&so);
    assert_eq!(j["command"], "effect");
    assert_eq!(j["shown_class"], "yes");
    assert_eq!(j["rows_read"], 2000);
    assert_eq!(j["rows_averaged"], 2000);
    let out_dir = dir.path().join("out");

    // A numeric input: 8 quantiles (fewer if two coincide), the average first, then
    // 5 rows' curves over the same grid.
    let year = csv_file(&out_dir.join("effect_install_year.csv"));
    assert_eq!(
        year[0],
        [
            "curve",
            "data_row",
            "install_year",
            "rows_near",
            "prob_no",
            "prob_yes"
        ]
    );
    let avg: Vec<&Vec<String>> = year[1..].iter().filter(|r| r[0] == "average").collect();
    let rows: Vec<&Vec<String>> = year[1..].iter().filter(|r| r[0] == "row").collect();
    let g = avg.len();
    assert!((2..=8).contains(&g), "{g} grid points");
    assert_eq!(rows.len(), 5 * g);
    assert_eq!(year.len(), 1 + 6 * g);
    let grid: Vec<f64> = avg.iter().map(|r| r[2].parse().expect("number")).collect();
    assert!(grid.windows(2).all(|w| w[0] < w[1]), "{grid:?}");
    for r in &avg {
        let (no, yes): (f64, f64) = (r[4].parse().expect("p"), r[5].parse().expect("p"));
        assert!((no + yes - 1.0).abs() < 2e-6 && r[1].is_empty(), "{r:?}");
    }
    // The rows near the grid points and the missing years count every row.
    let near: usize = avg
        .iter()
        .map(|r| r[3].parse::<usize>().expect("count"))
        .sum();
    let e = &j["effects"][0];
    assert_eq!(
        near + e["rows_missing"].as_u64().expect("missing") as usize,
        2000
    );
    assert_eq!(e["average"].as_array().map(Vec::len), Some(g));
    let drawn: Vec<u64> = e["rows_drawn"]
        .as_array()
        .expect("rows")
        .iter()
        .map(|v| v.as_u64().expect("row"))
        .collect();
    assert_eq!(drawn.len(), 5);
    assert!(drawn.iter().all(|&r| (1..=2000).contains(&r)));
    let in_csv: Vec<u64> = rows
        .iter()
        .step_by(g)
        .map(|r| r[1].parse().expect("row"))
        .collect();
    assert_eq!(in_csv, drawn);

    // A categorical input: one point per category of the model.
    let material = csv_file(&out_dir.join("effect_material.csv"));
    let cats: Vec<&str> = material[1..]
        .iter()
        .filter(|r| r[0] == "average")
        .map(|r| r[2].as_str())
        .collect();
    assert_eq!(
        cats,
        [
            "asbestos_cement",
            "cast_iron",
            "ductile_iron",
            "hdpe",
            "pvc",
            "steel"
        ]
    );
    assert_eq!(j["effects"][1]["kind"], "categorical");

    // The pair: one line per cell, 8 (or fewer) years by the 4 soil classes.
    let map = csv_file(&out_dir.join("surface_install_year_soil_corrosivity.csv"));
    assert_eq!(
        map[0],
        [
            "install_year",
            "soil_corrosivity",
            "rows_near",
            "prob_no",
            "prob_yes"
        ]
    );
    let s = &j["surfaces"][0];
    let years = s["grids"][0].as_array().expect("grid").len();
    assert_eq!(s["grids"][1].as_array().map(Vec::len), Some(4));
    assert_eq!(map.len(), 1 + 4 * years);
    let share = s["interaction_share"].as_f64().expect("share");
    assert!((0.0..=1.0).contains(&share));

    for svg in [
        "effect_install_year.svg",
        "effect_material.svg",
        "surface_install_year_soil_corrosivity.svg",
    ] {
        let text = std::fs::read_to_string(out_dir.join(svg)).expect("svg");
        assert!(text.contains("<svg") && text.contains("chance of"), "{svg}");
        assert!(se.contains(svg), "{se}");
    }
    let text = std::fs::read_to_string(out_dir.join("effect_install_year.svg")).expect("svg");
    assert!(text.contains("rows of the data at each value"));
    let text = std::fs::read_to_string(out_dir.join("surface_install_year_soil_corrosivity.svg"))
        .expect("svg");
    assert!(text.contains("interaction share"));

    // The same seed draws the same rows: a second run writes the same bytes.
    let again = effect(
        dir.path(),
        &[
            "--input",
            "install_year",
            "--grid",
            "8",
            "--curves",
            "5",
            "--out-dir",
            "again",
        ],
    );
    expect_code(&again, 0);
    assert_eq!(
        std::fs::read(out_dir.join("effect_install_year.csv")).expect("csv"),
        std::fs::read(dir.path().join("again/effect_install_year.csv")).expect("csv")
    );
}

#[test]
fn a_categorical_effect_known_by_construction_is_recovered() {
    // The outcome is 10, 20 or 30 by category and nothing else. The one input is the
    // category: every leaf of a fully grown tree holds rows of one category, so each
    // row's prediction at a category is that category's value, and so is the average
    // (to rounding).
    let dir = tmp();
    let mut csv = String::from("kind,y\n");
    for i in 0..90 {
        let (k, v) = [("a", 10), ("b", 20), ("c", 30)][i % 3];
        csv.push_str(&format!("{k},{v}\n"));
    }
    std::fs::write(dir.path().join("known.csv"), &csv).expect("data");
    let train = [
        "train",
        "--data",
        "known.csv",
        "--target",
        "y",
        "--out",
        "known.copse",
        "--trees",
        "30",
        "-q",
    ];
    expect_code(&copse_in(dir.path(), &train, None), 0);
    let args = [
        "effect",
        "--model",
        "known.copse",
        "--data",
        "known.csv",
        "--input",
        "kind",
        "--json",
    ];
    let (so, _) = expect_code(&copse_in(dir.path(), &args, None), 0);
    let j = json_of(&so);
    let e = &j["effects"][0];
    assert_eq!(e["grid"], serde_json::json!(["a", "b", "c"]));
    assert_eq!(e["rows_near"], serde_json::json!([30, 30, 30]));
    for (m, want) in e["average"]
        .as_array()
        .expect("average")
        .iter()
        .zip([10.0, 20.0, 30.0])
    {
        assert!(
            (m.as_f64().expect("number") - want).abs() < 1e-9,
            "{m} against {want}"
        );
    }
    let rows = csv_file(&dir.path().join("copse-effects/effect_kind.csv"));
    assert_eq!(
        rows[0],
        ["curve", "data_row", "kind", "rows_near", "prediction"]
    );
    assert_eq!(rows.len(), 1 + 3 + 3 * 40);
}

#[test]
fn bad_requests_are_refused_before_any_file_is_written() {
    let dir = tmp();
    demo_model(dir.path());
    let cases: [(&[&str], &str); 7] = [
        (&[], "name what to draw"),
        (
            &["--input", "age"],
            "no input 'age'; its inputs are install_year",
        ),
        (&["--input", "failed_within_year"], "it is the target"),
        (
            &["--pair", "install_year"],
            "two input names joined by a comma",
        ),
        (&["--pair", "material,material"], "names 'material' twice"),
        (
            &["--input", "material", "--class", "maybe"],
            "not a class of the model",
        ),
        (&["--input", "material", "--grid", "1"], "--grid"),
    ];
    for (extra, want) in cases {
        let mut args = extra.to_vec();
        args.extend(["--out-dir", "never"]);
        let (_, se) = expect_code(&effect(dir.path(), &args), 2);
        assert!(se.contains(want), "{extra:?}: {se}");
        assert!(!dir.path().join("never").exists(), "{extra:?}");
    }
    let missing = [
        "effect",
        "--model",
        "mains.copse",
        "--data",
        "absent.csv",
        "--input",
        "material",
        "--out-dir",
        "never",
    ];
    let (_, se) = expect_code(&copse_in(dir.path(), &missing, None), 2);
    assert!(se.contains("absent.csv"), "{se}");
    let no_model = [
        "effect",
        "--model",
        "absent.copse",
        "--data",
        "absent.csv",
        "--input",
        "material",
    ];
    let (_, se) = expect_code(&copse_in(dir.path(), &no_model, None), 2);
    assert!(se.contains("absent.copse"), "{se}");
    assert!(!dir.path().join("never").exists());
}

#[test]
fn a_sample_of_rows_is_averaged_when_asked() {
    let dir = tmp();
    demo_model(dir.path());
    let out = effect(
        dir.path(),
        &[
            "--input",
            "pressure_kpa",
            "--sample",
            "300",
            "--curves",
            "0",
            "--json",
        ],
    );
    let (so, _) = expect_code(&out, 0);
    let j = json_of(&so);
    assert_eq!(j["rows_averaged"], 300);
    let near: u64 = j["effects"][0]["rows_near"]
        .as_array()
        .expect("counts")
        .iter()
        .map(|v| v.as_u64().expect("count"))
        .sum();
    assert_eq!(
        near + j["effects"][0]["rows_missing"].as_u64().expect("n"),
        300
    );
    let rows = csv_file(&dir.path().join("copse-effects/effect_pressure_kpa.csv"));
    assert!(rows[1..].iter().all(|r| r[0] == "average"));
}
