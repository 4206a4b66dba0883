//! What the fuzz targets run on one input, shared by the targets under
//! `fuzz/fuzz_targets/` (included there by path) and by
//! `tests/fuzz_regressions.rs`, so a saved crash is replayed by exactly the
//! code that found it.
//!
//! `csv_readers`: the first byte picks a reader (and whether the plan maps a
//! column), the rest is the file. `plan`: the bytes are a plan file written
//! into a tiny valid project, so the inputs it names exist and the load goes
//! on to the CSV readers, the cross-checks, the model and the central
//! estimate. Either way a reader must return, and an error must name the
//! file it is about; anything else panics, which is what the fuzzer reports.
#![allow(dead_code)]

use furrow::inputs::{clusters, keywords, monthly, queries, scenarios};
use furrow::plan::Overrides;
use furrow::Error;
use std::collections::BTreeMap;
use std::path::{Component, Path};

/// The readers, in the order the selector byte picks them (`byte % 8`).
pub const READERS: [&str; 8] = [
    "history", "interest", "actuals", "keywords", "queries", "clusters", "returns", "costs",
];

/// The reader a selector byte picks, and whether a column mapping is used
/// (bit 3), as `(name, mapped)`.
pub fn selected(selector: u8) -> (&'static str, bool) {
    (READERS[usize::from(selector % 8)], selector & 8 != 0)
}

fn mapping(pairs: &[(&str, &str)]) -> BTreeMap<String, String> {
    pairs
        .iter()
        .map(|(k, v)| (k.to_string(), v.to_string()))
        .collect()
}

/// Runs the reader `selector` picks on `path`; what it read is dropped.
pub fn read_csv(selector: u8, path: &Path) -> Result<(), Error> {
    let (reader, mapped) = selected(selector);
    let map = |pairs: &[(&str, &str)]| {
        if mapped {
            mapping(pairs)
        } else {
            BTreeMap::new()
        }
    };
    match reader {
        "history" => monthly::read(
            path,
            monthly::HISTORY_COLUMNS,
            &map(&[("clicks", "Organic clicks")]),
            monthly::NON_NEGATIVE,
        )
        .map(drop),
        "interest" => monthly::read(
            path,
            monthly::INDEX_COLUMNS,
            &map(&[("index", "brand interest")]),
            monthly::INDEX_RANGE,
        )
        .map(drop),
        "actuals" => monthly::read(
            path,
            monthly::ACTUALS_COLUMNS,
            &map(&[("revenue", "sales")]),
            monthly::NON_NEGATIVE,
        )
        .map(drop),
        "keywords" => keywords::read(path, &map(&[("volume", "Searches per month")])).map(drop),
        "queries" => queries::read(path, &map(&[("query", "Search query")])).map(drop),
        "clusters" => clusters::read(path, &map(&[("cost", "price")])).map(drop),
        "returns" => scenarios::read_returns(path).map(drop),
        _ => scenarios::read_costs(path).map(drop),
    }
}

/// Panics unless `err`'s message names `file` (every problem of an input
/// error, since each is shown on its own line).
pub fn assert_names(err: &Error, file: &str) {
    let msg = err.to_string();
    assert!(
        msg.contains(file),
        "the error does not name the file {file}: {msg}"
    );
    if let Error::Input(issues) = err {
        assert!(!issues.items().is_empty(), "an input error with no problem");
        for i in issues.items() {
            assert!(
                i.to_string().contains(file),
                "a problem does not name the file {file}: {i}"
            );
        }
    }
}

/// The `csv_readers` check of one input: `data[0]` picks the reader,
/// `data[1..]` is written to `path` and read. Returns whether it was read.
pub fn check_csv(data: &[u8], path: &Path) -> bool {
    let Some((&selector, body)) = data.split_first() else {
        return false;
    };
    std::fs::write(path, body).expect("write the fuzz input");
    match read_csv(selector, path) {
        Ok(()) => true,
        Err(e) => {
            assert!(
                matches!(e, Error::Input(_)),
                "a reader of an existing file failed with a non-input error: {e}"
            );
            assert_names(&e, &path.display().to_string());
            false
        }
    }
}

/// The files of the tiny valid project the `plan` target loads plans in:
/// 24 months of history, an index, eleven clusters of one or two keywords
/// (the cluster names of `furrow init`'s and the demo's plans, plus one
/// defined in `clusters.csv`), a query export and three months of actuals.
pub const PROJECT: &[(&str, &str)] = &[
    ("history.csv", HISTORY),
    ("interest.csv", INTEREST),
    ("keywords.csv", KEYWORDS),
    ("queries.csv", QUERIES),
    ("clusters.csv", CLUSTERS),
    ("actuals.csv", ACTUALS),
];

const HISTORY: &str = "month,clicks,impressions,branded_clicks,sessions,conversions,revenue
2025-01,1200,40000,200,1500,30,3300
2025-02,1100,38000,190,1400,28,3000
2025-03,1300,42000,210,1600,33,3600
2025-04,1500,47000,230,1800,37,4000
2025-05,1700,52000,250,2000,41,4500
2025-06,1800,55000,260,2100,43,4700
2025-07,1750,54000,255,2050,42,4600
2025-08,1600,50000,240,1900,39,4300
2025-09,1400,45000,220,1700,35,3800
2025-10,1300,43000,215,1600,32,3500
2025-11,1250,41000,205,1550,31,3400
2025-12,1350,44000,225,1650,34,3700
2026-01,1300,43000,215,1600,33,3600
2026-02,1200,40000,205,1500,30,3300
2026-03,1420,45000,225,1700,35,3900
2026-04,1640,50000,245,1950,40,4400
2026-05,1860,56000,270,2150,44,4800
2026-06,1970,59000,280,2250,46,5000
2026-07,1910,58000,275,2200,45,4900
2026-08,1750,54000,260,2050,42,4600
2026-09,1530,48000,235,1800,37,4100
2026-10,1420,46000,230,1700,35,3800
2026-11,1370,44000,220,1650,34,3700
2026-12,1480,47000,240,1750,36,4000
";

const INTEREST: &str = "month,index
2025-01,40
2025-02,38
2025-03,45
2025-04,55
2025-05,62
2025-06,66
2025-07,64
2025-08,58
2025-09,50
2025-10,46
2025-11,44
2025-12,48
2026-01,42
2026-02,40
2026-03,47
2026-04,57
2026-05,65
2026-06,69
2026-07,67
2026-08,60
2026-09,52
2026-10,48
2026-11,46
2026-12,50
";

const KEYWORDS: &str = "keyword,cluster,volume,position,difficulty,branded
cedar raised bed,raised beds,900,14.2,40,false
raised bed soil mix,raised beds,400,,55,false
seed tray with lid,seed starting,700,8.5,30,false
compost bin small,composting,1200,22,60,false
worm farm,composting,300,3.1,25,false
lean-to greenhouse,greenhouses,500,41,70,false
dwarf apple tree,fruit trees,650,12,45,false
soaker hose,watering,800,6,35,false
hand trowel,hand tools,450,9.9,20,false
tulip bulbs,bulbs,1500,17,50,false
lawn feed,lawn care,2000,33,65,false
nematodes for slugs,natural pest control,350,,40,false
example shop planters,extra,250,1.4,5,true
";

const QUERIES: &str = "query,clicks,impressions,position
cedar raised bed,120,900,2.1
seed tray with lid,60,1100,4.5
compost bin small,15,1300,9.8
example shop planters,210,320,1.1
hand trowel,5,700,14.2
lawn feed,1,2100,31.0
";

const CLUSTERS: &str = "cluster,tier,cost,effort,start,label,gain_distribution,gain_over,gain_min,gain_mode,gain_max,gain_lambda
extra,1,500,1,2027-02,refresh,,,,,,
extra,2,800,1.5,,new pages,pert,positions-gained,0,2,6,4
";

const ACTUALS: &str = "month,clicks,revenue
2027-01,1400,3900
2027-02,1300,3600
2027-03,1550,4200
";

/// Writes the tiny project (and the built-in model files under `models/`)
/// into `dir`.
pub fn write_project(dir: &Path) {
    std::fs::create_dir_all(dir).expect("create the project folder");
    for (name, text) in PROJECT {
        std::fs::write(dir.join(name), text).expect("write a project file");
    }
    furrow::model_files::write_defaults(&dir.join("models")).expect("write the model files");
}

/// True when `p` stays inside the project folder: relative, without `..`.
fn stays_inside(p: &str) -> bool {
    Path::new(p)
        .components()
        .all(|c| matches!(c, Component::Normal(_) | Component::CurDir))
}

/// True when every file or folder the plan names stays inside its folder.
/// Plans that name anything else (`/dev/stdin`, `../..`) are skipped, not
/// because furrow mishandles them but so the fuzzer never reads outside the
/// project or blocks on a device.
fn confined(plan: &furrow::plan::Plan) -> bool {
    let i = &plan.file.inputs;
    let m = &plan.file.models;
    [
        &i.history,
        &i.interest,
        &i.keywords,
        &i.queries,
        &i.clusters,
        &i.actuals,
        &m.dir,
        &m.ctr,
        &m.branded_ctr,
        &m.rank_gain,
    ]
    .into_iter()
    .flatten()
    .all(|p| stays_inside(p))
}

/// The `plan` check of one input: `data` is written to `plan_path` (in a
/// folder made by [`write_project`]) and loaded as `furrow check` would. A
/// plan or input error must name the plan or one of its files; a plan that
/// loads goes on to the model and the central estimate, which must give
/// numbers rather than NaN. Returns how far it got: 0 plan refused, 1 plan
/// read, 2 inputs loaded, 3 estimated.
pub fn check_plan(data: &[u8], plan_path: &Path) -> u8 {
    std::fs::write(plan_path, data).expect("write the fuzz plan");
    let dir = plan_path.parent().expect("the plan has a folder");
    let plan_name = plan_path.display().to_string();
    let plan = match furrow::plan::load(plan_path) {
        Ok(p) => p,
        Err(e) => {
            assert!(
                matches!(e, Error::Plan { .. } | Error::Input(_)),
                "reading a plan failed with an unexpected kind of error: {e}"
            );
            assert_names(&e, &plan_name);
            return 0;
        }
    };
    if !confined(&plan) {
        return 1;
    }
    let inputs = match furrow::inputs::load::load(plan_path, &Overrides::default()) {
        Ok(i) => i,
        Err(e) => {
            assert!(
                matches!(e, Error::Input(_) | Error::Read { .. }),
                "loading a plan's inputs failed with an unexpected kind of error: {e}"
            );
            assert_names(&e, &dir.display().to_string());
            return 1;
        }
    };
    let Ok(model) = furrow::simulate::prepare(&inputs) else {
        return 2;
    };
    let est = furrow::estimate::estimate(&model, &inputs.plan.currency);
    assert_estimate_has_no_nan(&est);
    3
}

/// Panics when a number of the central estimate is NaN.
pub fn assert_estimate_has_no_nan(est: &furrow::estimate::Estimate) {
    let head = [est.conversion_rate, est.order_value, est.gross_margin];
    assert!(head.iter().all(|v| !v.is_nan()), "NaN in {head:?}");
    for r in &est.rows {
        for f in [&r.marginal, &r.cumulative] {
            let v = [
                f.cost,
                f.clicks,
                f.orders,
                f.revenue,
                f.gross_profit,
                f.net_return,
                f.return_on_spend.unwrap_or(0.0),
                f.roi.unwrap_or(0.0),
            ];
            assert!(v.iter().all(|x| !x.is_nan()), "NaN in {}: {f:?}", r.id);
        }
        assert!(
            r.monthly_clicks.iter().all(|x| !x.is_nan()),
            "NaN in the monthly clicks of {}: {:?}",
            r.id,
            r.monthly_clicks
        );
    }
}
