//! `stress`, `track` and `estimate` through the binary: the documented
//! outputs exist and move the way they must.

mod common;
use common::*;

#[test]
fn a_volume_drop_lowers_the_expected_return_of_the_same_allocation() {
    let (_t, dir) = project();
    let v = json(&furrow(
        &dir,
        &[
            "stress",
            "plan.toml",
            "--preset",
            "volume-drop",
            "--scenarios",
            "400",
            "--format",
            "json",
        ],
    ));
    let base = v["base"]["expected_net_return"].as_f64().unwrap();
    let drop = v["presets"][0]["expected_net_return"].as_f64().unwrap();
    assert_eq!(v["presets"][0]["name"], "volume-drop");
    assert!(drop < base, "{drop} < {base}");
}

#[test]
fn tracking_reports_each_observed_month_and_the_rest_of_the_horizon() {
    let (_t, dir) = project();
    let v = json(&furrow(
        &dir,
        &[
            "track",
            "plan.toml",
            "--actuals",
            "actuals.csv",
            "--scenarios",
            "400",
            "--format",
            "json",
        ],
    ));
    let observed = v["observed"].as_array().unwrap();
    let rest = v["reforecast"].as_array().unwrap();
    assert_eq!(observed.len(), 3);
    assert_eq!(observed.len() + rest.len(), 12);
    for m in observed {
        let (p10, p90) = (m["p10"].as_f64().unwrap(), m["p90"].as_f64().unwrap());
        assert!(p10 <= p90);
    }
}

#[test]
fn actuals_outside_the_horizon_are_refused() {
    let (_t, dir) = project();
    write(&dir, "late.csv", b"month,clicks\n2030-01,100\n");
    let o = furrow(
        &dir,
        &[
            "track",
            "plan.toml",
            "--actuals",
            "late.csv",
            "--scenarios",
            "200",
        ],
    );
    // Bad input (exit 1), named by file and column, with what would do.
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    let e = stderr(&o);
    assert!(e.contains("late.csv") && e.contains("'month'"), "{e}");
    assert!(e.contains("must run from the forecast start"), "{e}");
    assert!(e.contains("found 2030-01 to 2030-01"), "{e}");
    assert!(o.stdout.is_empty());
}

/// A missing file is named once with its cause once (the cause is not
/// repeated after the message that already holds it).
#[test]
fn a_missing_file_names_its_cause_once() {
    let (_t, dir) = project();
    let o = furrow(&dir, &["check", "absent.toml"]);
    assert_eq!(o.status.code(), Some(1));
    let e = stderr(&o);
    assert!(e.contains("absent.toml"), "{e}");
    assert_eq!(e.matches("os error 2").count(), 1, "{e}");
}

#[test]
fn estimate_csv_has_one_row_per_tier_and_the_two_ratios_apart() {
    let (_t, dir) = project();
    let o = furrow(&dir, &["estimate", "plan.toml", "--format", "csv"]);
    assert!(o.status.success(), "{}", stderr(&o));
    let text = stdout(&o);
    let header: Vec<&str> = text.lines().next().unwrap().split(',').collect();
    assert!(header.contains(&"return_on_spend") && header.contains(&"roi"));
    assert_eq!(
        text.lines().count(),
        1 + 10,
        "the init template has 10 tiers"
    );
    // ROI = (gross profit - cost) / cost and return on spend = revenue / cost, row by row.
    let col = |name: &str| header.iter().position(|h| *h == name).unwrap();
    for line in text.lines().skip(1) {
        let cells: Vec<&str> = line.split(',').collect();
        let f = |n: &str| cells[col(n)].parse::<f64>().unwrap();
        assert!((f("roi") - (f("gross_profit") - f("cost")) / f("cost")).abs() < 1e-9);
        assert!((f("return_on_spend") - f("revenue") / f("cost")).abs() < 1e-9);
    }
}
