//! The report's workbook, `furrow-plan.xlsx`: a valid zip package whose
//! sheets are the report's tables, with figures stored as numbers equal to
//! `summary.json`'s and shown in money, percentage and count formats, frozen
//! header rows and filters; user text (a cluster named `=1+1`) stored as
//! text, never as a formula. Also the number-format builder (currency
//! escaping) and sheet-name sanitising.
//!
//! The package is read back with the zip crate the writer itself uses, and
//! its XML is read by the rules of ISO/IEC 29500-1 (SpreadsheetML): §18.3.1.4
//! `c` (cell: `t="s"` shared string, `t="inlineStr"` inline string, no `t`
//! a number, `f` a formula), §18.3.1.66 `pane` (`state="frozen"`),
//! §18.3.1.2 `autoFilter`, §18.8.30-31 `numFmt` (built-in ids 0-49, custom
//! codes in `numFmts`) and §18.8.10 `cellXfs` (a cell's `s` indexes it).

mod common;
use common::*;
use furrow::report::workbook::{
    money_format, sheet_name, COUNT_FORMAT, FILE_NAME, RATIO_FORMAT, SHARE_FORMAT,
};
use regex::Regex;
use serde_json::Value;
use std::collections::BTreeMap;
use std::io::Read;
use std::path::Path;

/// The sheets every report of an init project has (it sets a target and
/// names no actuals), in order.
const SHEETS: [&str; 8] = [
    "Summary",
    "Allocation",
    "Clusters",
    "Forecast",
    "Frontier",
    "Stress",
    "Target",
    "Drivers",
];

/// The XML parts of a package, by path.
struct Package {
    bytes: Vec<u8>,
    parts: BTreeMap<String, String>,
}

impl Package {
    fn part(&self, name: &str) -> &str {
        self.parts
            .get(name)
            .unwrap_or_else(|| panic!("the package holds {name}"))
    }
}

/// Runs `furrow report` on the project and reads summary.json and the workbook.
fn report(dir: &Path) -> (Value, Package) {
    let o = furrow(
        dir,
        &[
            "report",
            "plan.toml",
            "--scenarios",
            "300",
            "--out",
            "rep",
            "--quiet",
        ],
    );
    assert!(o.status.success(), "{}", stderr(&o));
    let json = std::fs::read_to_string(dir.join("rep/summary.json")).unwrap();
    let summary: Value = serde_json::from_str(&json).unwrap();
    (summary, unzip(&dir.join("rep").join(FILE_NAME)))
}

fn unzip(path: &Path) -> Package {
    let bytes = std::fs::read(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let mut zip = zip::ZipArchive::new(std::io::Cursor::new(bytes.clone())).unwrap();
    let mut parts = BTreeMap::new();
    for i in 0..zip.len() {
        let mut f = zip.by_index(i).unwrap();
        let name = f.name().unwrap().to_string();
        if name.ends_with(".xml") || name.ends_with(".rels") {
            let mut s = String::new();
            f.read_to_string(&mut s).unwrap();
            parts.insert(name, s);
        }
    }
    Package { bytes, parts }
}

/// XML character references undone (XML 1.0 §4.6 predefined entities).
fn unescape(s: &str) -> String {
    s.replace("&lt;", "<")
        .replace("&gt;", ">")
        .replace("&quot;", "\"")
        .replace("&apos;", "'")
        .replace("&amp;", "&")
}

/// The value of attribute `name` in the element text `elem`.
fn attr(elem: &str, name: &str) -> Option<String> {
    let re = Regex::new(&format!(r#"(?:^|\s){name}="([^"]*)""#)).unwrap();
    re.captures(elem).map(|c| unescape(&c[1]))
}

/// The sheets in workbook order: (name, path of its XML part).
fn sheets(p: &Package) -> Vec<(String, String)> {
    let rels: BTreeMap<String, String> = Regex::new(r"<Relationship\s([^>]*)/?>")
        .unwrap()
        .captures_iter(p.part("xl/_rels/workbook.xml.rels"))
        .filter_map(|c| Some((attr(&c[1], "Id")?, attr(&c[1], "Target")?)))
        .collect();
    Regex::new(r"<sheet\s([^>]*)/?>")
        .unwrap()
        .captures_iter(p.part("xl/workbook.xml"))
        .map(|c| {
            let name = attr(&c[1], "name").unwrap();
            let target = &rels[&attr(&c[1], "r:id").unwrap()];
            (name, format!("xl/{}", target.trim_start_matches("/xl/")))
        })
        .collect()
}

fn sheet_xml<'a>(p: &'a Package, name: &str) -> &'a str {
    let all = sheets(p);
    let (_, path) = all
        .iter()
        .find(|(n, _)| n == name)
        .unwrap_or_else(|| panic!("sheet {name} in {all:?}"));
    p.part(path)
}

/// One cell as stored.
#[derive(Debug)]
struct XCell {
    col: String,
    row: usize,
    t: Option<String>,
    style: usize,
    value: Option<String>,
    inline: Option<String>,
    formula: bool,
}

fn texts_of(xml: &str) -> String {
    Regex::new(r"(?s)<t(?:\s[^>]*)?>(.*?)</t>")
        .unwrap()
        .captures_iter(xml)
        .map(|c| unescape(&c[1]))
        .collect()
}

fn cells(xml: &str) -> Vec<XCell> {
    let re = Regex::new(r"(?s)<c\s([^>]*?)(?:/>|>(.*?)</c>)").unwrap();
    let v = Regex::new(r"(?s)<v>(.*?)</v>").unwrap();
    let f = Regex::new(r"<f[\s>/]").unwrap();
    re.captures_iter(xml)
        .map(|c| {
            let r = attr(&c[1], "r").unwrap();
            let split = r.find(|ch: char| ch.is_ascii_digit()).unwrap();
            let inner = c.get(2).map_or("", |m| m.as_str());
            XCell {
                col: r[..split].to_string(),
                row: r[split..].parse().unwrap(),
                t: attr(&c[1], "t"),
                style: attr(&c[1], "s").map_or(0, |s| s.parse().unwrap()),
                value: v.captures(inner).map(|m| unescape(&m[1])),
                inline: inner.contains("<is>").then(|| texts_of(inner)),
                formula: f.is_match(inner),
            }
        })
        .collect()
}

fn shared_strings(p: &Package) -> Vec<String> {
    let Some(xml) = p.parts.get("xl/sharedStrings.xml") else {
        return Vec::new();
    };
    Regex::new(r"(?s)<si>(.*?)</si>")
        .unwrap()
        .captures_iter(xml)
        .map(|c| texts_of(&c[1]))
        .collect()
}

/// The text of a string cell (shared or inline); None for any other cell.
fn cell_text(c: &XCell, sst: &[String]) -> Option<String> {
    match c.t.as_deref() {
        Some("s") => Some(sst[c.value.as_ref()?.parse::<usize>().ok()?].clone()),
        Some("inlineStr") => c.inline.clone(),
        _ => None,
    }
}

/// The value of a number cell (no type or `t="n"`); None for any other cell.
fn cell_number(c: &XCell) -> Option<f64> {
    match c.t.as_deref() {
        None | Some("n") => c.value.as_ref()?.parse().ok(),
        _ => None,
    }
}

/// The format code of every cell style, by style index: custom codes from
/// `numFmts`, a few built-in ones (ISO/IEC 29500-1 §18.8.30).
fn style_codes(p: &Package) -> Vec<String> {
    let xml = p.part("xl/styles.xml");
    let mut codes: BTreeMap<String, String> = [
        ("0", "General"),
        ("1", "0"),
        ("2", "0.00"),
        ("3", "#,##0"),
        ("4", "#,##0.00"),
        ("9", "0%"),
        ("10", "0.00%"),
    ]
    .map(|(a, b)| (a.to_string(), b.to_string()))
    .into();
    for c in Regex::new(r"<numFmt\s([^>]*)/?>")
        .unwrap()
        .captures_iter(xml)
    {
        codes.insert(
            attr(&c[1], "numFmtId").unwrap(),
            attr(&c[1], "formatCode").unwrap(),
        );
    }
    let xfs = Regex::new(r"(?s)<cellXfs[^>]*>(.*?)</cellXfs>").unwrap();
    let block = xfs.captures(xml).unwrap()[1].to_string();
    Regex::new(r"<xf\s([^>]*?)/?>")
        .unwrap()
        .captures_iter(&block)
        .map(|c| {
            let id = attr(&c[1], "numFmtId").unwrap_or_else(|| "0".into());
            codes
                .get(&id)
                .cloned()
                .unwrap_or_else(|| format!("id {id}"))
        })
        .collect()
}

fn at<'a>(cells: &'a [XCell], col: &str, row: usize) -> &'a XCell {
    cells
        .iter()
        .find(|c| c.col == col && c.row == row)
        .unwrap_or_else(|| panic!("cell {col}{row}"))
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() <= 1e-9
}

#[test]
fn the_report_folder_holds_a_workbook_with_one_sheet_per_table() {
    let (_t, dir) = project();
    let (_, p) = report(&dir);
    // A zip package starts with a local file header (signature PK\3\4,
    // zip format note APPNOTE.TXT §4.3.7).
    assert_eq!(&p.bytes[..4], b"PK\x03\x04");
    assert!(p.parts.contains_key("[Content_Types].xml"));
    let names: Vec<String> = sheets(&p).into_iter().map(|(n, _)| n).collect();
    assert_eq!(names, SHEETS);
    let pane_re = Regex::new(r"<pane\s([^>]*)/?>").unwrap();
    for name in &SHEETS[1..] {
        let xml = sheet_xml(&p, name);
        let pane = pane_re.captures(xml);
        let pane = pane
            .unwrap_or_else(|| panic!("{name}: a pane"))
            .get(1)
            .unwrap()
            .as_str()
            .to_string();
        assert_eq!(attr(&pane, "state").as_deref(), Some("frozen"), "{name}");
        assert_eq!(
            attr(&pane, "ySplit").as_deref(),
            Some("1"),
            "{name}: the header row"
        );
        assert!(
            xml.contains(r#"<autoFilter ref="A1:"#),
            "{name}: filter on the table"
        );
    }
    let summary = sheet_xml(&p, "Summary");
    assert!(
        !summary.contains("<autoFilter"),
        "the summary is not a table"
    );
}

#[test]
fn allocation_spend_is_stored_as_numbers_equal_to_summary_json() {
    let (_t, dir) = project();
    let (sm, p) = report(&dir);
    let sst = shared_strings(&p);
    let codes = style_codes(&p);
    let cells = cells(sheet_xml(&p, "Allocation"));
    let items = sm["allocation"]["allocation"].as_array().unwrap();
    assert!(items.len() >= 9, "every tier of the init plan is listed");
    for (i, item) in items.iter().enumerate() {
        let row = i + 2;
        assert_eq!(
            cell_text(at(&cells, "A", row), &sst).as_deref(),
            item["id"].as_str()
        );
        let share = at(&cells, "B", row);
        let spend = at(&cells, "C", row);
        let want = item["spend"].as_f64().unwrap();
        let got = cell_number(spend).unwrap_or_else(|| panic!("C{row} is a number: {spend:?}"));
        assert!(close(got, want), "spend row {row}: {got} vs {want}");
        assert!(close(
            cell_number(share).unwrap(),
            item["fraction"].as_f64().unwrap()
        ));
        // The format a finance team reads: thousands separators and the
        // currency as literal text; shares as percentages.
        assert_eq!(codes[spend.style], r#"#,##0 "EUR""#);
        assert_eq!(codes[share.style], SHARE_FORMAT);
    }
    assert!(
        items.iter().any(|i| i["spend"].as_f64().unwrap() > 0.0),
        "something is funded"
    );
}

#[test]
fn other_sheets_hold_summary_json_figures_as_formatted_numbers() {
    let (_t, dir) = project();
    let (sm, p) = report(&dir);
    let sst = shared_strings(&p);
    let codes = style_codes(&p);
    // Forecast: column D is the baseline P50 of each month, a count.
    let fc = cells(sheet_xml(&p, "Forecast"));
    for (i, m) in sm["forecast"].as_array().unwrap().iter().enumerate() {
        assert_eq!(
            cell_text(at(&fc, "A", i + 2), &sst).as_deref(),
            m["month"].as_str()
        );
        let c = at(&fc, "D", i + 2);
        assert!(close(
            cell_number(c).unwrap(),
            m["baseline_p50"].as_f64().unwrap()
        ));
        assert_eq!(codes[c.style], COUNT_FORMAT);
    }
    // Clusters: the first rows are what each tier adds (cost in F, ROI in X).
    let cl = cells(sheet_xml(&p, "Clusters"));
    let tier = &sm["clusters"]["tiers"][0];
    assert_eq!(
        cell_text(at(&cl, "A", 2), &sst).as_deref(),
        tier["id"].as_str()
    );
    assert!(close(
        cell_number(at(&cl, "F", 2)).unwrap(),
        tier["cost"].as_f64().unwrap()
    ));
    let roi = at(&cl, "X", 2);
    assert!(close(
        cell_number(roi).unwrap(),
        tier["roi"].as_f64().unwrap()
    ));
    assert_eq!(codes[roi.style], RATIO_FORMAT);
    // Summary: label/value rows; the budget is money, the seed exact text.
    let su = cells(sheet_xml(&p, "Summary"));
    let row_of = |label: &str| {
        su.iter()
            .find(|c| c.col == "A" && cell_text(c, &sst).as_deref() == Some(label))
            .unwrap_or_else(|| panic!("a row labelled {label}"))
            .row
    };
    let budget = at(&su, "B", row_of("Budget"));
    assert!(close(
        cell_number(budget).unwrap(),
        sm["allocation"]["budget"].as_f64().unwrap()
    ));
    assert_eq!(codes[budget.style], money_format("EUR"));
    let seed = cell_text(at(&su, "B", row_of("Seed")), &sst);
    assert_eq!(seed, Some(sm["reproducibility"]["seed"].to_string()));
    let all: Vec<String> = su.iter().filter_map(|c| cell_text(c, &sst)).collect();
    for h in sm["reproducibility"]["inputs"].as_array().unwrap() {
        assert!(
            all.iter().any(|t| Some(t.as_str()) == h["sha256"].as_str()),
            "hash of {h}"
        );
    }
    assert!(
        all.iter()
            .any(|t| Some(t.as_str()) == sm["decision"].as_str()),
        "the decision"
    );
}

/// Renames the init project's clusters in plan.toml and keywords.csv.
fn rename_clusters(dir: &Path, renames: &[(&str, &str)]) {
    let mut plan = std::fs::read_to_string(dir.join("plan.toml")).unwrap();
    let mut rd = csv::Reader::from_path(dir.join("keywords.csv")).unwrap();
    let header = rd.headers().unwrap().clone();
    let col = header.iter().position(|h| h == "cluster").unwrap();
    let mut wr = csv::Writer::from_writer(Vec::new());
    wr.write_record(&header).unwrap();
    for rec in rd.records() {
        let rec = rec.unwrap();
        let fields = rec.iter().enumerate().map(|(i, f)| {
            let to = renames.iter().find(|(from, _)| i == col && *from == f);
            to.map_or(f, |(_, to)| *to)
        });
        wr.write_record(fields).unwrap();
    }
    write(dir, "keywords.csv", &wr.into_inner().unwrap());
    for (from, to) in renames {
        let old = format!("name = \"{from}\"");
        assert!(plan.contains(&old), "the template names {from}");
        plan = plan.replace(&old, &format!("name = {to:?}"));
    }
    write(dir, "plan.toml", plan.as_bytes());
}

#[test]
fn formula_like_cluster_names_and_an_odd_currency_stay_literal_text() {
    let (_t, dir) = project();
    rename_clusters(
        &dir,
        &[("composting", "=1+1"), ("seed starting", "@SUM(A1)")],
    );
    let plan = std::fs::read_to_string(dir.join("plan.toml")).unwrap();
    let currency = r#"E"U;R"#;
    write(
        &dir,
        "plan.toml",
        plan.replace(r#"currency = "EUR""#, &format!("currency = {currency:?}"))
            .as_bytes(),
    );
    let (sm, p) = report(&dir);
    let sst = shared_strings(&p);
    let mut texts = Vec::new();
    let formula = Regex::new(r"<f[\s>/]").unwrap();
    for (name, path) in sheets(&p) {
        let xml = p.part(&path);
        assert!(!formula.is_match(xml), "{name}: no formula anywhere");
        for c in cells(xml) {
            assert!(!c.formula && c.t.as_deref() != Some("str"), "{name}: {c:?}");
            texts.extend(cell_text(&c, &sst));
        }
    }
    for want in ["=1+1", "=1+1/1", "@SUM(A1)", "@SUM(A1)/1"] {
        assert!(texts.iter().any(|t| t == want), "{want} as a text cell");
    }
    // The spend column shows the currency through the escaped format code.
    let codes = style_codes(&p);
    let alloc = cells(sheet_xml(&p, "Allocation"));
    assert_eq!(codes[at(&alloc, "C", 2).style], money_format(currency));
    assert_eq!(sm["currency"].as_str(), Some(currency));
}

#[test]
fn a_plan_with_actuals_adds_the_tracking_sheet() {
    let (_t, dir) = project();
    let plan = std::fs::read_to_string(dir.join("plan.toml")).unwrap();
    let on = plan.replace("# actuals = \"actuals.csv\"", "actuals = \"actuals.csv\"");
    assert_ne!(on, plan, "the template has the actuals line");
    write(&dir, "plan.toml", on.as_bytes());
    let (sm, p) = report(&dir);
    let names: Vec<String> = sheets(&p).into_iter().map(|(n, _)| n).collect();
    assert_eq!(names.last().map(String::as_str), Some("Tracking"));
    let cells = cells(sheet_xml(&p, "Tracking"));
    let observed = sm["tracking"]["observed"].as_array().unwrap();
    assert!(!observed.is_empty());
    for (i, o) in observed.iter().enumerate() {
        let got = cell_number(at(&cells, "C", i + 2)).unwrap();
        assert!(close(got, o["actual"].as_f64().unwrap()));
    }
}

/// The literal text of a number format's part after `#,##0 `, read by the
/// rules of ISO/IEC 29500-1 §18.8.31: text in double quotes is shown as is,
/// a backslash shows the next character; an unquoted `;` would start a new
/// section (None then).
fn literal_text(code: &str) -> Option<String> {
    let rest = code.strip_prefix("#,##0 ")?;
    let (mut out, mut chars, mut quoted) = (String::new(), rest.chars(), false);
    while let Some(c) = chars.next() {
        match (quoted, c) {
            (_, '"') => quoted = !quoted,
            (false, '\\') => out.push(chars.next()?),
            (false, ';') => return None,
            (true, c) => out.push(c),
            (false, _) => return None,
        }
    }
    (!quoted).then_some(out)
}

#[test]
fn money_format_quotes_the_currency_and_escapes_what_would_end_it() {
    // Each code was rendered by the reference formatter ssf 0.11.2 (npm, a
    // formatter of ECMA-376 spreadsheet format codes): 1234567.891 shows as
    // the text in the third column (-1234.5 for the semicolon case).
    let cases = [
        ("EUR", r#"#,##0 "EUR""#, "1,234,568 EUR"),
        (r#"A"B"#, r#"#,##0 "A"\""B""#, r#"1,234,568 A"B"#),
        ("a;b", r#"#,##0 "a"\;"b""#, "-1,235 a;b"),
        (r"C:\x", r#"#,##0 "C:"\\"x""#, r"1,234,568 C:\x"),
        ("\"", r#"#,##0 \""#, "1,234,568 \""),
        ("0#?%,.E+", r#"#,##0 "0#?%,.E+""#, "1,234,568 0#?%,.E+"),
        ("€", "#,##0 \"€\"", "1,234,568 €"),
        ("E\nU", r#"#,##0 "E U""#, "1,234,568 E U"),
    ];
    for (currency, code, shown) in cases {
        assert_eq!(money_format(currency), code, "currency {currency:?}");
        // The literal read back by the format-code rules is what follows
        // the number in the rendered text.
        let lit = literal_text(code).unwrap();
        assert!(
            shown.ends_with(&format!(" {lit}")),
            "{code}: {lit} in {shown}"
        );
    }
    assert_eq!(money_format(""), COUNT_FORMAT);
    assert_eq!(money_format("  \t"), COUNT_FORMAT);
    // A long label is cut, so the whole code stays far below 255 characters
    // (implementer notes to ISO/IEC 29500-1 §18.8.30).
    let long = money_format(&"\"".repeat(500));
    assert!(long.chars().count() < 255, "{}", long.len());
    assert_eq!(literal_text(&long), Some("\"".repeat(40)));
}

#[test]
fn sheet_names_are_valid_for_the_writer_and_unique() {
    // (raw, taken, expected): forbidden characters become _, apostrophes
    // and spaces at the ends go, 31 UTF-16 units at most, unique regardless
    // of case, "History" reserved.
    let taken = vec!["Summary".to_string(), "Target".to_string()];
    let cases: [(&str, &str); 9] = [
        ("a[b]c:d*e?f/g\\h", "a_b_c_d_e_f_g_h"),
        ("'quoted'", "quoted"),
        ("", "Sheet"),
        ("   ", "Sheet"),
        ("summary", "summary (2)"),
        ("TARGET", "TARGET (2)"),
        ("History", "History (2)"),
        (
            "a very long table name that goes on",
            "a very long table name that goe",
        ),
        ("tab\u{7}bell", "tab_bell"),
    ];
    for (raw, want) in cases {
        assert_eq!(sheet_name(raw, &taken), want, "{raw:?}");
    }
    // Characters outside the basic plane count twice (UTF-16): 15 of them
    // and a letter fill the 31 units; one more would not fit.
    let wide = format!("{}ab", "\u{1F331}".repeat(15));
    assert_eq!(
        sheet_name(&wide, &[]),
        format!("{}a", "\u{1F331}".repeat(15))
    );
    let long_taken = vec!["x".repeat(31)];
    assert_eq!(
        sheet_name(&"x".repeat(40), &long_taken),
        format!("{} (2)", "x".repeat(27))
    );
    // Every name made in turn is accepted by the writer's own validation
    // and unique in one workbook, so the workbook saves.
    let mut wb = rust_xlsxwriter::Workbook::new();
    let mut made: Vec<String> = Vec::new();
    let ys = "y".repeat(50);
    let raws = [
        "Data",
        "data",
        "DATA",
        "'",
        "[]",
        "[]",
        "History",
        wide.as_str(),
        ys.as_str(),
        ys.as_str(),
    ];
    for raw in raws {
        let name = sheet_name(raw, &made);
        wb.add_worksheet()
            .set_name(name.as_str())
            .unwrap_or_else(|e| panic!("{raw:?} -> {name:?}: {e}"));
        made.push(name);
    }
    let lower: std::collections::BTreeSet<String> = made.iter().map(|n| n.to_lowercase()).collect();
    assert_eq!(lower.len(), made.len(), "{made:?}");
    assert!(wb.save_to_buffer().is_ok());
}
