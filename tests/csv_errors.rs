//! Bad data files get one line naming the file and line and what to do.

use candor::data::csv::parse_csv;
use candor::experiment::manifest::check_class_counts;
use candor::experiment::manifest::Evaluation;

fn error_of(csv: &[u8], target: &str, positive: Option<&str>) -> String {
    match parse_csv(csv, "in.csv", target, positive) {
        Ok(_) => panic!("accepted:\n{}", String::from_utf8_lossy(csv)),
        Err(e) => {
            let msg = e.to_string();
            assert!(!msg.contains('\n'), "message spans lines: {msg}");
            msg
        }
    }
}

fn expect(csv: &str, target: &str, positive: Option<&str>, parts: &[&str]) {
    let msg = error_of(csv.as_bytes(), target, positive);
    for p in parts {
        assert!(msg.contains(p), "expected `{p}` in: {msg}");
    }
}

#[test]
fn a_row_with_too_few_fields() {
    expect(
        "a,b,y\n1,2,0\n3,1\n4,5,1\n",
        "y",
        None,
        &["in.csv:3:", "row has 2 fields but the header has 3"],
    );
}

#[test]
fn a_missing_target_column() {
    expect(
        "a,b,label\n1,2,0\n",
        "y",
        None,
        &["in.csv:", "no column named `y`", "columns are: a, b, label"],
    );
}

#[test]
fn an_empty_label() {
    expect(
        "a,y\n1,0\n2,\n3,1\n",
        "y",
        None,
        &["in.csv:3:", "the target `y` is empty"],
    );
}

#[test]
fn a_single_class() {
    expect(
        "a,y\n1,yes\n2,yes\n",
        "y",
        Some("yes"),
        &["single class `yes` (2 rows)"],
    );
}

#[test]
fn not_a_number_and_infinity() {
    expect(
        "a,y\n1,0\nNaN,1\n",
        "y",
        None,
        &[
            "in.csv:3:",
            "column `a` holds `NaN`",
            "leave the field empty",
        ],
    );
    expect(
        "a,y\n1,0\n2,1\n-inf,1\n",
        "y",
        None,
        &["in.csv:4:", "column `a` holds `-inf`"],
    );
}

#[test]
fn a_binary_target_needs_a_positive_class_unless_it_is_zero_one() {
    expect(
        "a,y\n1,cat\n2,dog\n",
        "y",
        None,
        &["labels `cat` and `dog`", "set `positive`"],
    );
    expect(
        "a,y\n1,cat\n2,dog\n",
        "y",
        Some("bird"),
        &["positive class `bird` is not a label"],
    );
    let t = parse_csv(b"a,y\n1,0\n2,1\n3,1\n", "in.csv", "y", None).unwrap();
    assert_eq!(t.classes, vec!["0", "1"]);
    let t = parse_csv(b"a,y\n1,cat\n2,dog\n", "in.csv", "y", Some("cat")).unwrap();
    assert_eq!(t.classes, vec!["dog", "cat"]);
    assert_eq!(t.labels, vec![1, 0]);
}

#[test]
fn positive_on_a_multiclass_target() {
    expect(
        "a,y\n1,a\n2,b\n3,c\n",
        "y",
        Some("a"),
        &["applies to binary targets", "has 3 classes"],
    );
}

#[test]
fn a_repeated_column_name() {
    expect(
        "a,a,y\n1,2,0\n",
        "y",
        None,
        &["in.csv:1:", "`a` appears twice"],
    );
}

#[test]
fn empty_and_header_only_files() {
    expect("", "y", None, &["in.csv", "no header row"]);
    expect("a,y\n", "y", None, &["no data rows"]);
}

#[test]
fn text_that_is_not_utf8() {
    let msg = error_of(b"a,y\n1,0\n\xff\xfe,1\n", "y", None);
    assert!(
        msg.contains("in.csv:3:") && msg.contains("not valid UTF-8"),
        "{msg}"
    );
}

#[test]
fn constant_columns_are_noted_and_all_constant_features_rejected() {
    let t = parse_csv(b"a,c,y\n1,5,0\n2,5,1\n", "in.csv", "y", None).unwrap();
    assert_eq!(t.columns.len(), 1);
    assert!(t.warnings[0].contains("column `c` has a single value"));
    expect("c,y\n5,0\n5,1\n", "y", None, &["no usable feature columns"]);
}

#[test]
fn categorical_and_missing_values_are_typed() {
    let t = parse_csv(b"n,colour,y\n1,red,0\n,blue,1\n3,,1\n", "in.csv", "y", None).unwrap();
    use candor::data::table::ColumnData;
    assert!(matches!(&t.columns[0].data, ColumnData::Numeric(v) if v[1].is_nan()));
    assert!(matches!(&t.columns[1].data,
        ColumnData::Categorical { levels, codes } if levels == &["blue", "red"] && codes[2] == u32::MAX));
}

#[test]
fn a_class_too_rare_for_the_folds() {
    let mut csv = String::from("a,y\n");
    for i in 0..40 {
        csv.push_str(&format!("{i},{}\n", if i < 6 { "rare" } else { "common" }));
    }
    let mut t = parse_csv(csv.as_bytes(), "in.csv", "y", Some("rare")).unwrap();
    t.name = "d".into();
    let eval = Evaluation {
        outer_folds: 5,
        inner_folds: 5,
        ..candor::experiment::manifest::default_evaluation(0)
    };
    let msg = check_class_counts(&t, &eval).unwrap_err().to_string();
    assert!(
        msg.contains("class `rare` of dataset `d` has 6 rows")
            && msg.contains("needs at least 7")
            && msg.contains("lower `outer_folds` or `inner_folds`"),
        "{msg}"
    );
    let eval = Evaluation {
        inner_folds: 4,
        ..eval
    };
    check_class_counts(&t, &eval).unwrap();
}
