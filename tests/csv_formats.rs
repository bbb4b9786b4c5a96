//! Other ways a team's CSV may be written: gzip-compressed, other
//! delimiters, decimal commas. Each must load to exactly the table the
//! plain comma-separated file gives.

use candor::data::csv::{read_csv, CsvFormat};
use candor::data::table::Table;
use std::io::Write;

const PLAIN: &str = "age,city,score,y\n31,Ostend,2.5,yes\n45,Lyon,,no\n27,,3.75,yes\n52,Lyon,1.0,no\n38,Ostend,0.5,yes\n";

fn same(a: &Table, b: &Table) {
    // Debug text, because a missing number is NaN and NaN != NaN.
    assert_eq!(format!("{:?}", a.columns), format!("{:?}", b.columns));
    assert_eq!(a.labels, b.labels);
    assert_eq!(a.classes, b.classes);
}

fn load(dir: &std::path::Path, name: &str, bytes: &[u8], format: &CsvFormat) -> Table {
    let path = dir.join(name);
    std::fs::write(&path, bytes).unwrap();
    read_csv(&path, "y", Some("yes"), format).unwrap()
}

#[test]
fn gzip_delimiters_and_decimal_commas_load_the_same_table() {
    let tmp = tempfile::tempdir().unwrap();
    let plain = load(tmp.path(), "a.csv", PLAIN.as_bytes(), &CsvFormat::default());
    assert_eq!(plain.rows(), 5);

    let mut gz = flate2::write::GzEncoder::new(Vec::new(), flate2::Compression::default());
    gz.write_all(PLAIN.as_bytes()).unwrap();
    let gz = gz.finish().unwrap();
    same(
        &plain,
        &load(tmp.path(), "a.csv.gz", &gz, &CsvFormat::default()),
    );

    let tabs = PLAIN.replace(',', "\t");
    let tab = CsvFormat {
        delimiter: b'\t',
        decimal_comma: false,
        ..CsvFormat::default()
    };
    same(&plain, &load(tmp.path(), "a.tsv", tabs.as_bytes(), &tab));

    let european = PLAIN.replace(',', ";").replace('.', ",");
    let semi = CsvFormat {
        delimiter: b';',
        decimal_comma: true,
        ..CsvFormat::default()
    };
    same(
        &plain,
        &load(tmp.path(), "e.csv", european.as_bytes(), &semi),
    );
}

#[test]
fn a_wrong_delimiter_is_explained() {
    let tmp = tempfile::tempdir().unwrap();
    let path = tmp.path().join("s.csv");
    std::fs::write(&path, PLAIN.replace(',', ";")).unwrap();
    let err = read_csv(&path, "y", None, &CsvFormat::default())
        .err()
        .unwrap()
        .to_string();
    assert!(err.contains("set `delimiter`"), "{err}");
}

#[test]
fn manifests_take_delimiter_and_decimal() {
    let tmp = tempfile::tempdir().unwrap();
    std::fs::write(
        tmp.path().join("e.csv"),
        PLAIN.replace(',', ";").replace('.', ","),
    )
    .unwrap();
    let base = "name = \"x\"\n[[dataset]]\nname = \"e\"\npath = \"e.csv\"\ntarget = \"y\"\npositive = \"yes\"\n";
    let m = tmp.path().join("m.toml");
    std::fs::write(&m, format!("{base}delimiter = \";\"\ndecimal = \",\"\n[[family]]\nname = \"lr\"\nkind = \"logistic\"\n")).unwrap();
    let exp = candor::experiment::manifest::load(&m).unwrap();
    assert_eq!(exp.datasets[0].format.delimiter, b';');
    assert!(exp.datasets[0].format.decimal_comma);
    for (extra, want) in [
        ("decimal = \",\"\n", "needs another field delimiter"),
        ("delimiter = \";;\"\n", "one ASCII character"),
        ("decimal = \"'\"\n", "must be \".\" or \",\""),
    ] {
        std::fs::write(
            &m,
            format!("{base}{extra}[[family]]\nname = \"lr\"\nkind = \"logistic\"\n"),
        )
        .unwrap();
        let err = candor::experiment::manifest::load(&m)
            .err()
            .unwrap()
            .to_string();
        assert!(
            err.contains(want) && err.contains("m.toml:"),
            "{extra}: {err}"
        );
    }
}

#[test]
fn a_column_that_turns_to_text_late_is_categorical_with_every_level() {
    // Numbers in the first rows and text later: the column is categorical,
    // and its early numbers are levels like any other value.
    let tmp = tempfile::tempdir().unwrap();
    let t = load(
        tmp.path(),
        "late.csv",
        b"code,blank,y\n10,,yes\n7,,no\n10,,yes\nX9,north,no\n,south,yes\n",
        &CsvFormat::default(),
    );
    let levels = |i: usize| match &t.columns[i].data {
        candor::data::table::ColumnData::Categorical { codes, levels } => {
            (codes.clone(), levels.clone())
        }
        other => panic!("{other:?}"),
    };
    let (codes, levels_code) = levels(0);
    assert_eq!(levels_code, vec!["10", "7", "X9"]);
    assert_eq!(codes, vec![0, 1, 0, 2, u32::MAX]);
    let (codes, levels_blank) = levels(1);
    assert_eq!(levels_blank, vec!["north", "south"]);
    assert_eq!(codes, vec![u32::MAX, u32::MAX, u32::MAX, 0, 1]);
}
