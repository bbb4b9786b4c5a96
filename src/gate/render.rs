//! How a gate verdict reads: a short text for the terminal, Markdown for a
//! CI job summary and JUnit XML for CI test reports.

use super::Outcome;
use crate::export::escape_xml as xml;
use std::fmt::Write as _;

/// A short summary for people.
pub fn human(o: &Outcome) -> String {
    let mut s = String::new();
    for n in &o.notes {
        let _ = writeln!(s, "note: {n}");
    }
    for c in &o.checks {
        let mark = if c.failures.is_empty() {
            "ok  "
        } else {
            "FAIL"
        };
        let _ = writeln!(s, "{mark} {} ({} rows)", c.rule, c.rows);
        for f in &c.failures {
            let _ = writeln!(s, "       {f}");
        }
    }
    let failed = o.checks.iter().filter(|c| !c.failures.is_empty()).count();
    let _ = writeln!(
        s,
        "{}: {} of {} rules hold",
        o.experiment,
        o.checks.len() - failed,
        o.checks.len()
    );
    s
}

/// Markdown for a CI job summary.
pub fn markdown(o: &Outcome) -> String {
    let mut s = format!(
        "### candor gate: {} ({})\n\n",
        o.experiment,
        if o.passed() { "passed" } else { "regression" }
    );
    for n in &o.notes {
        let _ = writeln!(s, "> {n}\n");
    }
    s.push_str("| result | rule | rows | details |\n|---|---|---|---|\n");
    for c in &o.checks {
        let details = c.failures.join("<br>").replace('|', "\\|");
        let _ = writeln!(
            s,
            "| {} | {} | {} | {} |",
            if c.failures.is_empty() {
                "pass"
            } else {
                "fail"
            },
            c.rule.replace('|', "\\|"),
            c.rows,
            details
        );
    }
    s
}

/// JUnit XML, one test case per rule.
pub fn junit(o: &Outcome) -> String {
    let failed = o.checks.iter().filter(|c| !c.failures.is_empty()).count();
    let mut s = format!(
        "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<testsuites>\n<testsuite name=\"candor gate: {}\" tests=\"{}\" failures=\"{failed}\">\n",
        xml(&o.experiment),
        o.checks.len()
    );
    for c in &o.checks {
        let _ = write!(
            s,
            "<testcase classname=\"candor.gate\" name=\"{}\"",
            xml(&c.rule)
        );
        if c.failures.is_empty() {
            s.push_str("/>\n");
        } else {
            let _ = writeln!(
                s,
                "><failure message=\"{} of {} rows broke the rule\">{}</failure></testcase>",
                c.failures.len(),
                c.rows,
                xml(&c.failures.join("\n"))
            );
        }
    }
    s.push_str("</testsuite>\n</testsuites>\n");
    s
}
