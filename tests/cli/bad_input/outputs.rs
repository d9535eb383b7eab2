//! Outputs: impossible or clashing output paths and full devices, with nothing half-
//! written left behind.
use super::*;

#[test]
fn m35_output_folder_missing() {
    let dir = tmp();
    put(dir.path(), "d.csv", "a,y\n1,p\n2,q\n");
    let args = [
        "train",
        "--data",
        "d.csv",
        "--target",
        "y",
        "--out",
        "nowhere/m.copse",
    ];
    refused(
        dir.path(),
        &args,
        None,
        2,
        &[
            "cannot write nowhere/m.copse",
            "the folder nowhere does not exist",
            "create it first",
        ],
    );
    iris_model(dir.path());
    let i = iris();
    refused(
        dir.path(),
        &[
            "score",
            "--model",
            "iris.copse",
            "--data",
            &i,
            "--out",
            "nowhere/s.csv",
        ],
        None,
        2,
        &["the folder nowhere does not exist"],
    );
}

/// An output that names the input file is refused before anything is read or written
/// (the input stays intact).
#[test]
fn m36_output_path_equal_to_the_input() {
    let dir = tmp();
    put(dir.path(), "d.csv", "a,y\n1,p\n2,q\n3,p\n");
    let args = [
        "train", "--data", "d.csv", "--target", "y", "--out", "d.csv",
    ];
    refused(
        dir.path(),
        &args,
        None,
        2,
        &[
            "the model file d.csv is the input file itself",
            "choose another output path",
        ],
    );
    let args = [
        "train",
        "--data",
        "d.csv",
        "--target",
        "y",
        "--out",
        "m.copse",
        "--oob-out",
        "./d.csv",
    ];
    refused(
        dir.path(),
        &args,
        None,
        2,
        &["the out-of-bag file ./d.csv is the input file itself"],
    );
    expect_code(&copse_in(dir.path(), &train_args("d.csv", "y"), None), 0);
    refused(
        dir.path(),
        &[
            "score", "--model", "m.copse", "--data", "d.csv", "--out", "d.csv",
        ],
        None,
        2,
        &["the output file d.csv is the input file itself"],
    );
    assert_eq!(
        std::fs::read_to_string(dir.path().join("d.csv")).expect("input"),
        "a,y\n1,p\n2,q\n3,p\n"
    );
}

/// A model written to a full device: exit 1, the device left in place.
#[test]
fn m37_model_to_a_full_device() {
    if super::super::full_device("m37_model_to_a_full_device").is_none() {
        return;
    }
    let dir = tmp();
    put(dir.path(), "d.csv", "a,y\n1,p\n2,q\n3,p\n");
    let args = [
        "train",
        "--data",
        "d.csv",
        "--target",
        "y",
        "--out",
        "/dev/full",
    ];
    refused(
        dir.path(),
        &args,
        None,
        1,
        &["could not write /dev/full", "check the disk has room"],
    );
    super::super::assert_full_device_intact();
}
