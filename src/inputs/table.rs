//! The CSV core every reader shares: real exports, read as they come.
//!
//! Detects the delimiter (comma, semicolon or tab) from the header line,
//! strips a UTF-8 byte-order mark, accepts CRLF, matches header names
//! case-insensitively (with an optional mapping from the plan for exports
//! whose headers differ), refuses binary, UTF-16 and non-UTF-8 input with the
//! line and column, and reports ragged rows. Rows are streamed, never held
//! twice, so a million-row keyword list loads in one pass. Header names and
//! cells shown in messages go through `number::echo`, which cuts long ones.
//!
//! Every numeric cell goes through the file's [`Convention`], which works
//! out the decimal mark from the cells as they pass. When a cell read
//! tentatively turns out to be in a decimal-comma file, [`twice`] reads the
//! file a second time with the convention known (only such files pay for a
//! second pass). [`ReadSettings`] carries what the user declared (a column
//! mapping, a number format) and how this command lets them declare it, so
//! that no message points to a plan table the command does not read.

use crate::error::{Error, Issues, Result};
use csv::ByteRecord;
use std::collections::BTreeMap;
use std::fs::File;
use std::io::{Cursor, Read};
use std::path::Path;

use super::number::{
    ambiguous_message, echo, At, Convention, Decimal, NumberFormat, NumberKind, Origin,
};
use std::cell::RefCell;

/// Where the user maps headers or declares the number format for a file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Via {
    /// A plan key, named after the file (`history`, `keywords`, ...):
    /// `[inputs.columns.<key>]` and `[inputs.numbers] <key>`.
    Plan(String),
    /// Command-line flags (`--map`, `--numbers`).
    Flags,
    /// Nowhere: the command reads the file as it is.
    Nowhere,
}

/// What a reader needs besides the path: the user's column mapping, the
/// declared number format, and where those are declared (for messages).
#[derive(Debug, Clone)]
pub struct ReadSettings<'a> {
    /// Canonical column name to the header used in the file.
    pub mapping: &'a BTreeMap<String, String>,
    /// The declared decimal mark, if any.
    pub numbers: Option<Decimal>,
    /// Where mapping and number format are declared.
    pub via: Via,
}

impl<'a> ReadSettings<'a> {
    /// A file named in the plan under `[inputs] <key>`.
    pub fn plan(
        key: &str,
        mapping: &'a BTreeMap<String, String>,
        numbers: Option<Decimal>,
    ) -> Self {
        ReadSettings {
            mapping,
            numbers,
            via: Via::Plan(key.to_string()),
        }
    }

    /// A file named by a flag of a command that has `--map` and `--numbers`.
    pub fn flags(mapping: &'a BTreeMap<String, String>, numbers: Option<Decimal>) -> Self {
        ReadSettings {
            mapping,
            numbers,
            via: Via::Flags,
        }
    }

    /// A file read as it is (no mapping, no declared format).
    pub fn bare(mapping: &'a BTreeMap<String, String>) -> Self {
        ReadSettings {
            mapping,
            numbers: None,
            via: Via::Nowhere,
        }
    }

    /// The convention a first pass starts from.
    fn convention(&self) -> Convention {
        match self.numbers {
            Some(d) => Convention::known(d, Origin::Declared(self.declared_by())),
            None => Convention::unknown(),
        }
    }

    fn declared_by(&self) -> String {
        match &self.via {
            Via::Plan(key) => format!("[inputs.numbers] {key} in the plan"),
            Via::Flags => "--numbers".into(),
            Via::Nowhere => "the command".into(),
        }
    }

    /// How the user settles an ambiguous number, as the end of a message.
    pub fn settle_hint(&self) -> String {
        let (c, p) = (Decimal::Comma.example(), Decimal::Point.example());
        match &self.via {
            Via::Plan(key) => format!(
                "declare the file's number format in the plan: [inputs.numbers] {key} = \"{c}\" (decimal comma) or \"{p}\" (decimal point)"
            ),
            Via::Flags => format!(
                "declare the file's number format with --numbers \"{c}\" (decimal comma) or --numbers \"{p}\" (decimal point)"
            ),
            Via::Nowhere => "write the file's numbers without grouping marks (1234.5)".into(),
        }
    }

    /// How the user maps a header for column `name`, as the end of a message.
    fn map_hint(&self, name: &str) -> String {
        match &self.via {
            Via::Plan(key) => format!(
                "Rename the column or map it in the plan's [inputs.columns.{key}] table ({name} = \"the header in your file\")"
            ),
            Via::Flags => format!(
                "Rename the column or map it with --map {name}=\"the header in your file\""
            ),
            Via::Nowhere => format!("Rename the column to '{name}'"),
        }
    }
}

/// Reads `--map NAME=HEADER` flags into a mapping; every NAME must be a
/// column of one of `files` (the column lists the command reads).
pub fn parse_map_flags(
    flags: &[String],
    files: &[&[ColumnSpec]],
) -> Result<BTreeMap<String, String>> {
    let mut map = BTreeMap::new();
    for f in flags {
        let Some((name, header)) = f.split_once('=') else {
            return Err(Error::Setting(format!(
                "--map expects NAME=HEADER (for example --map clicks=\"Clicks per month\"), found '{}'",
                echo(f)
            )));
        };
        let name = name.trim().to_lowercase();
        let known: Vec<&str> = files
            .iter()
            .flat_map(|s| s.iter().map(|c| c.name))
            .collect();
        if !known.contains(&name.as_str()) {
            let mut names = known.clone();
            names.dedup();
            return Err(Error::Setting(format!(
                "--map {}: '{}' is not a column this command reads; expected one of {}",
                echo(f),
                echo(&name),
                names.join(", ")
            )));
        }
        if header.trim().is_empty() {
            return Err(Error::Setting(format!(
                "--map {}: expected the header your file uses after '=', found nothing",
                echo(f)
            )));
        }
        map.insert(name, header.trim().to_string());
    }
    Ok(map)
}

/// Reads a `--numbers` flag: how the file writes 1234.5.
pub fn parse_numbers_flag(flag: Option<&str>) -> Result<Option<Decimal>> {
    let Some(f) = flag else { return Ok(None) };
    match Decimal::parse_declared(f) {
        Some(d) => Ok(Some(d)),
        None => Err(Error::Setting(format!(
            "--numbers expects how the file writes one thousand two hundred thirty-four and a half: \"1,234.5\" or \"1234.5\" (decimal point), \"1.234,5\", \"1 234,5\" or \"1234,5\" (decimal comma); found '{}'",
            echo(f)
        ))),
    }
}

/// How a pass over a file ended.
pub enum Pass<T> {
    /// Read (the value, or the file's problems) with this number format.
    Done(Result<T>, NumberFormat),
    /// A cell read tentatively turned out to be in a decimal-comma file:
    /// read the file again with this convention.
    Again(Convention),
}

/// Runs a reader's pass, and a second one when the first found the file's
/// convention only after reading cells it affects.
pub fn twice<T>(
    settings: &ReadSettings,
    mut once: impl FnMut(Convention) -> Result<Pass<T>>,
) -> Result<(T, NumberFormat)> {
    let mut conv = settings.convention();
    loop {
        match once(conv)? {
            Pass::Done(r, f) => return r.map(|v| (v, f)),
            // A known convention never asks for another pass.
            Pass::Again(c) => conv = c,
        }
    }
}

/// A column a reader knows.
#[derive(Debug, Clone, Copy)]
pub struct ColumnSpec {
    /// The canonical (documented) name.
    pub name: &'static str,
    /// Whether the file must have it.
    pub required: bool,
    /// Other header names accepted for it (lower case).
    pub aliases: &'static [&'static str],
}

/// Shorthand for a required column.
pub const fn required(name: &'static str) -> ColumnSpec {
    ColumnSpec {
        name,
        required: true,
        aliases: &[],
    }
}

/// Shorthand for an optional column.
pub const fn optional(name: &'static str) -> ColumnSpec {
    ColumnSpec {
        name,
        required: false,
        aliases: &[],
    }
}

/// An open CSV file positioned on its data rows.
pub struct Table {
    /// The file as the user named it (for messages).
    pub file: String,
    reader: csv::Reader<Box<dyn Read>>,
    headers: Vec<String>,
    /// For each spec, the 0-based position of its column in the file.
    index: Vec<Option<usize>>,
    names: Vec<&'static str>,
    record: ByteRecord,
    line: u64,
    /// The line of the header.
    header_line: u64,
    /// Data rows seen so far (ragged ones included, blank lines not).
    rows: u64,
    /// Rows skipped as unreadable or ragged (already reported).
    skipped: u64,
    /// The delimiter found.
    pub delimiter: u8,
    /// The file's number convention, worked out as cells are read.
    numbers: RefCell<Convention>,
    /// Where the user declares things for this file.
    via: Via,
    settle_hint: String,
    map_hints: Vec<String>,
}

const PEEK: usize = 64 * 1024;

/// Opens `path` and matches its header against `specs`; `mapping` maps a
/// canonical name to the header text used in this file.
pub fn open(
    path: &Path,
    specs: &[ColumnSpec],
    mapping: &BTreeMap<String, String>,
) -> Result<Table> {
    let s = ReadSettings::plan("<file>", mapping, None);
    open_with(path, specs, &s, s.convention())
}

/// Opens `path` with `settings`, reading numbers with `numbers`.
pub fn open_with(
    path: &Path,
    specs: &[ColumnSpec],
    settings: &ReadSettings,
    numbers: Convention,
) -> Result<Table> {
    open_as(path, specs, settings, numbers, &expected_header(specs))
}

/// Like [`open_with`], for files whose header is not a fixed set of
/// columns: `header` says what the header should hold (for an empty
/// file's message).
pub fn open_as(
    path: &Path,
    specs: &[ColumnSpec],
    settings: &ReadSettings,
    numbers: Convention,
    header: &str,
) -> Result<Table> {
    let mapping = settings.mapping;
    let file = path.display().to_string();
    let mut f = File::open(path).map_err(|source| Error::Read {
        path: path.to_path_buf(),
        source,
    })?;
    let mut peek = Vec::with_capacity(PEEK);
    (&mut f)
        .take(PEEK as u64)
        .read_to_end(&mut peek)
        .map_err(|source| Error::Read {
            path: path.to_path_buf(),
            source,
        })?;
    check_encoding(&file, &peek, header)?;
    let skip = if peek.starts_with(b"\xEF\xBB\xBF") {
        3
    } else {
        0
    };
    let delimiter = detect_delimiter(&peek[skip..]);
    let head: Box<dyn Read> = Box::new(Cursor::new(peek).chain(f));
    let mut head = head;
    if skip > 0 {
        let mut bom = [0u8; 3];
        head.read_exact(&mut bom).map_err(|source| Error::Read {
            path: path.to_path_buf(),
            source,
        })?;
    }
    // Records end at '\n' only: with the default CRLF terminator the csv
    // crate numbers the lines of a CRLF file one too low. A '\r' left at
    // the end of a last cell is trimmed with the other whitespace.
    let reader = csv::ReaderBuilder::new()
        .terminator(csv::Terminator::Any(b'\n'))
        .delimiter(delimiter)
        .flexible(true)
        .has_headers(false)
        .from_reader(head);
    let mut table = Table {
        file,
        reader,
        headers: Vec::new(),
        index: Vec::new(),
        names: specs.iter().map(|s| s.name).collect(),
        record: ByteRecord::new(),
        line: 0,
        header_line: 1,
        rows: 0,
        skipped: 0,
        delimiter,
        numbers: RefCell::new(numbers),
        via: settings.via.clone(),
        settle_hint: settings.settle_hint(),
        map_hints: specs.iter().map(|c| settings.map_hint(c.name)).collect(),
    };
    table.read_header(specs, mapping, header)?;
    Ok(table)
}

fn expected_header(specs: &[ColumnSpec]) -> String {
    let req: Vec<&str> = specs
        .iter()
        .filter(|s| s.required)
        .map(|s| s.name)
        .collect();
    format!("a header line with the columns {}", req.join(", "))
}

/// Refuses empty, binary, UTF-16 and non-UTF-8 starts of file; `header`
/// says what the first line should hold.
fn check_encoding(file: &str, peek: &[u8], header: &str) -> Result<()> {
    let body = peek.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(peek);
    if body.iter().all(|b| b.is_ascii_whitespace()) {
        let msg = format!("the file is empty; expected {header}");
        return Err(Error::input(file, Some(1), None, &msg));
    }
    if peek.starts_with(b"\xFF\xFE") || peek.starts_with(b"\xFE\xFF") {
        let msg =
            "the file is UTF-16 encoded; expected UTF-8 text (save or export it as UTF-8 CSV)";
        return Err(Error::input(file, Some(1), None, msg));
    }
    if let Some(pos) = body.iter().position(|&b| b == 0) {
        let line = 1 + body[..pos].iter().filter(|&&b| b == b'\n').count() as u64;
        let msg = "the file looks binary (it contains NUL bytes); expected CSV text";
        return Err(Error::input(file, Some(line), None, msg));
    }
    Ok(())
}

/// Picks the most frequent of comma, semicolon and tab outside quotes on the
/// first line; comma when none appears.
fn detect_delimiter(bytes: &[u8]) -> u8 {
    let mut counts = [0usize; 3];
    let mut quoted = false;
    for &b in bytes {
        match b {
            b'"' => quoted = !quoted,
            b'\n' | b'\r' if !quoted => break,
            b',' if !quoted => counts[0] += 1,
            b';' if !quoted => counts[1] += 1,
            b'\t' if !quoted => counts[2] += 1,
            _ => {}
        }
    }
    let best = (0..3).max_by_key(|&i| (counts[i], 3 - i)).unwrap_or(0);
    if counts[best] == 0 {
        b','
    } else {
        [b',', b';', b'\t'][best]
    }
}

impl Table {
    fn read_header(
        &mut self,
        specs: &[ColumnSpec],
        mapping: &BTreeMap<String, String>,
        header: &str,
    ) -> Result<()> {
        let mut rec = ByteRecord::new();
        let ok = self.reader.read_byte_record(&mut rec).map_err(|e| {
            Error::input(
                &self.file,
                Some(1),
                None,
                &format!("cannot read the header: {e}"),
            )
        })?;
        if !ok {
            let msg = format!("the file is empty; expected {header}");
            return Err(Error::input(&self.file, Some(1), None, &msg));
        }
        self.line = rec.position().map(|p| p.line()).unwrap_or(1);
        self.header_line = self.line;
        let mut issues = Issues::default();
        for (i, cell) in rec.iter().enumerate() {
            match std::str::from_utf8(cell) {
                Ok(s) => self.headers.push(s.trim().to_string()),
                Err(e) => {
                    let shown = String::from_utf8_lossy(cell);
                    issues.add(
                        &self.file,
                        Some(self.line),
                        Some((&echo(shown.trim()), i + 1)),
                        utf8_msg(cell, e),
                    );
                    self.headers.push(String::new());
                }
            }
        }
        self.match_columns(specs, mapping, &mut issues);
        issues.into_result(())
    }

    fn match_columns(
        &mut self,
        specs: &[ColumnSpec],
        mapping: &BTreeMap<String, String>,
        issues: &mut Issues,
    ) {
        let lower: Vec<String> = self.headers.iter().map(|h| h.to_lowercase()).collect();
        for (i, h) in lower.iter().enumerate() {
            if !h.is_empty() && lower[..i].contains(h) {
                let name = echo(&self.headers[i]);
                let msg = format!("the header '{name}' appears twice; expected each column once");
                issues.add(&self.file, Some(self.line), Some((&name, i + 1)), msg);
            }
        }
        for spec in specs {
            let wanted: Vec<String> = match mapping.get(spec.name) {
                Some(m) => vec![m.trim().to_lowercase()],
                None => std::iter::once(spec.name)
                    .chain(spec.aliases.iter().copied())
                    .map(str::to_string)
                    .collect(),
            };
            let pos = lower.iter().position(|h| wanted.contains(h));
            if pos.is_none() && spec.required {
                let via = match (mapping.get(spec.name), &self.via) {
                    (Some(m), Via::Plan(_)) => format!(" (mapped in the plan to '{}')", echo(m)),
                    (Some(m), _) => format!(" (mapped with --map to '{}')", echo(m)),
                    (None, _) => String::new(),
                };
                let hint = self
                    .map_hints
                    .get(self.index.len())
                    .cloned()
                    .unwrap_or_default();
                let msg = format!(
                    "missing the required column '{}'{via}; the header has: {}. {hint}",
                    spec.name,
                    header_list(&self.headers)
                );
                issues.add(&self.file, Some(self.line), None, msg);
            }
            self.index.push(pos);
        }
    }

    /// Whether the file has the column of spec `k`.
    pub fn has(&self, k: usize) -> bool {
        self.index.get(k).copied().flatten().is_some()
    }

    /// The file's header names, as written.
    pub fn headers(&self) -> &[String] {
        &self.headers
    }

    /// The 1-based line of the current row.
    pub fn line(&self) -> u64 {
        self.line
    }

    /// Moves to the next data row, recording read errors and ragged rows (and
    /// skipping them). Returns false at the end of the file.
    pub fn next_row(&mut self, issues: &mut Issues) -> bool {
        loop {
            match self.reader.read_byte_record(&mut self.record) {
                Ok(false) => return false,
                Ok(true) => {}
                Err(e) => {
                    let line = e.position().map(|p| p.line());
                    issues.add(&self.file, line, None, format!("cannot read the row: {e}"));
                    self.skipped += 1;
                    return false;
                }
            }
            self.line = self
                .record
                .position()
                .map(|p| p.line())
                .unwrap_or(self.line + 1);
            if self.record.len() == 1
                && self
                    .record
                    .get(0)
                    .is_some_and(|c| c.trim_ascii().is_empty())
            {
                continue;
            }
            self.rows += 1;
            if self.record.len() != self.headers.len() {
                let msg = format!(
                    "expected {} fields as in the header, found {}",
                    self.headers.len(),
                    self.record.len()
                );
                issues.add(&self.file, Some(self.line), None, msg);
                self.skipped += 1;
                continue;
            }
            return true;
        }
    }

    /// Rows skipped so far because they could not be read or were ragged
    /// (each already reported).
    pub fn skipped(&self) -> u64 {
        self.skipped
    }

    /// Records "no rows after the header" when the file has a header and
    /// nothing else; `what` says what each row should be.
    pub fn expect_rows(&self, issues: &mut Issues, what: &str) {
        if self.rows == 0 {
            let msg = format!("no rows after the header; expected {what}");
            issues.add(&self.file, Some(self.header_line + 1), None, msg);
        }
    }

    /// The header name and 1-based position of spec `k`'s column, as
    /// messages show it (the canonical name when the file lacks it).
    pub fn column(&self, k: usize) -> (String, usize) {
        match self.index.get(k).copied().flatten() {
            Some(_) => self.col(k),
            None => (self.names.get(k).copied().unwrap_or("?").to_string(), 0),
        }
    }

    /// The header name (as messages show it) and 1-based position of spec
    /// `k`'s column.
    pub fn col(&self, k: usize) -> (String, usize) {
        let pos = self.index[k].unwrap_or(0);
        let name = self
            .headers
            .get(pos)
            .map(String::as_str)
            .unwrap_or(self.names[k]);
        (echo(name).into_owned(), pos + 1)
    }

    /// The raw cell of spec `k` as text (None when the column is absent or the
    /// cell is not UTF-8, which is recorded).
    pub fn text(&self, k: usize, issues: &mut Issues) -> Option<&str> {
        let pos = self.index.get(k).copied().flatten()?;
        let cell = self.record.get(pos)?;
        match std::str::from_utf8(cell) {
            Ok(s) => Some(s.trim()),
            Err(e) => {
                let (name, pos) = self.col(k);
                issues.add(
                    &self.file,
                    Some(self.line),
                    Some((&name, pos)),
                    utf8_msg(cell, e),
                );
                None
            }
        }
    }

    /// Records a problem with the cell of spec `k` on the current row.
    pub fn complain(&self, k: usize, issues: &mut Issues, msg: impl Into<String>) {
        let (name, pos) = self.col(k);
        issues.add(&self.file, Some(self.line), Some((&name, pos)), msg);
    }

    /// Records a problem with the current row as a whole.
    pub fn complain_row(&self, issues: &mut Issues, msg: impl Into<String>) {
        issues.add(&self.file, Some(self.line), None, msg);
    }

    /// The cell of spec `k` as a number; blank means `None`. Unparseable
    /// cells are recorded and also give `None` (check `issues`).
    pub fn number(&self, k: usize, kind: NumberKind, issues: &mut Issues) -> Option<f64> {
        let t = self.text(k, issues)?;
        if t.is_empty() {
            return None;
        }
        match self.parse(t, kind, || self.col(k)) {
            Ok(v) => Some(v),
            Err(msg) => {
                self.complain(k, issues, msg);
                None
            }
        }
    }

    /// Reads `raw`, a cell of the current row in the column `column` names
    /// (header, 1-based position), in the file's number convention.
    pub fn parse(
        &self,
        raw: &str,
        kind: NumberKind,
        column: impl FnOnce() -> (String, usize),
    ) -> std::result::Result<f64, String> {
        let line = self.line;
        self.numbers.borrow_mut().read(raw, kind, || At {
            line,
            column: column(),
        })
    }

    /// Ends a pass: reports cells no convention could settle, or asks for
    /// a second pass when the file turned out to use a decimal comma after
    /// cells were read tentatively with a decimal point.
    pub fn finish<T>(&self, issues: Issues, value: T) -> Pass<T> {
        let mut issues = issues;
        let c = self.numbers.borrow();
        if c.read_again() {
            let d = c.decimal().unwrap_or(Decimal::Comma);
            return Pass::Again(Convention::known(d, c.origin().clone()));
        }
        let (cells, count) = c.ambiguous();
        for a in cells {
            let (name, pos) = &a.at.column;
            let msg = ambiguous_message(a, &self.settle_hint);
            issues.add(&self.file, Some(a.at.line), Some((name, *pos)), msg);
        }
        if count > cells.len() as u64 {
            let msg = format!(
                "{} more numbers read differently with a decimal comma and with a decimal point; {}",
                count - cells.len() as u64,
                self.settle_hint
            );
            issues.add(&self.file, None, None, msg);
        }
        Pass::Done(issues.into_result(value), c.format())
    }

    /// Like [`Table::number`] but a blank cell is a problem too.
    pub fn required_number(&self, k: usize, kind: NumberKind, issues: &mut Issues) -> Option<f64> {
        if self
            .text(k, &mut Issues::default())
            .is_some_and(str::is_empty)
        {
            self.complain(k, issues, "expected a number, found an empty cell");
            return None;
        }
        self.number(k, kind, issues)
    }

    /// The cell of spec `k` as a number in `[lo, hi]`.
    pub fn number_in(
        &self,
        k: usize,
        lo: f64,
        hi: f64,
        kind: NumberKind,
        issues: &mut Issues,
    ) -> Option<f64> {
        let v = self.required_number(k, kind, issues)?;
        if v < lo || v > hi {
            let range = if hi >= f64::MAX {
                format!("at least {lo}")
            } else {
                format!("between {lo} and {hi}")
            };
            self.complain(k, issues, format!("expected a number {range}, found {v}"));
            return None;
        }
        Some(v)
    }

    /// Positions of the file's columns that no spec claimed, with their names.
    pub fn extra_columns(&self) -> Vec<(usize, String)> {
        (0..self.headers.len())
            .filter(|i| !self.index.contains(&Some(*i)))
            .map(|i| (i, self.headers[i].clone()))
            .collect()
    }

    /// The raw text of file column `pos` on the current row.
    pub fn raw(&self, pos: usize) -> Option<&[u8]> {
        self.record.get(pos)
    }

    /// The text of file column `pos` on the current row, trimmed; a cell
    /// that is not UTF-8 is recorded (with the column's header) and gives
    /// `None`.
    pub fn cell(&self, pos: usize, issues: &mut Issues) -> Option<&str> {
        let cell = self.record.get(pos)?;
        match std::str::from_utf8(cell) {
            Ok(s) => Some(s.trim()),
            Err(e) => {
                let name = echo(self.headers.get(pos).map(String::as_str).unwrap_or(""));
                issues.add(
                    &self.file,
                    Some(self.line),
                    Some((&name, pos + 1)),
                    utf8_msg(cell, e),
                );
                None
            }
        }
    }
}

/// The header names for a message: each cut by `echo`, at most 20 of them.
fn header_list(headers: &[String]) -> String {
    const SHOWN: usize = 20;
    let mut list: Vec<String> = headers
        .iter()
        .take(SHOWN)
        .map(|h| echo(h).into_owned())
        .collect();
    if headers.len() > SHOWN {
        list.push(format!("... and {} more", headers.len() - SHOWN));
    }
    list.join(", ")
}

fn utf8_msg(cell: &[u8], e: std::str::Utf8Error) -> String {
    format!(
        "the text is not valid UTF-8 (invalid byte 0x{:02X} at byte {} of the cell); expected UTF-8 text (export or save the file as UTF-8)",
        cell.get(e.valid_up_to()).copied().unwrap_or(0),
        e.valid_up_to() + 1
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn delimiter_detection_prefers_the_most_frequent_outside_quotes() {
        assert_eq!(detect_delimiter(b"a;b;c\n1,2;3"), b';');
        assert_eq!(detect_delimiter(b"a,b\n"), b',');
        assert_eq!(detect_delimiter(b"\"a;b\",c\n"), b',');
        assert_eq!(detect_delimiter(b"a\tb\tc"), b'\t');
        assert_eq!(detect_delimiter(b"single"), b',');
    }

    fn table_of(text: &str) -> (tempfile::TempDir, Table) {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("t.csv");
        std::fs::write(&path, text).unwrap();
        let specs = [required("month"), required("clicks")];
        let t = open(&path, &specs, &BTreeMap::new()).unwrap();
        (dir, t)
    }

    #[test]
    fn a_header_without_rows_is_reported_on_the_next_line() {
        let (_dir, mut t) = table_of("month,clicks\n\n");
        let mut issues = Issues::default();
        assert!(!t.next_row(&mut issues));
        t.expect_rows(&mut issues, "one row per month");
        let shown = issues.items()[0].to_string();
        assert!(
            shown.ends_with("line 2: no rows after the header; expected one row per month"),
            "{shown}"
        );
    }

    #[test]
    fn an_unbounded_range_says_at_least() {
        let (_dir, mut t) = table_of("month,clicks\n2025-01,-3\n");
        let mut issues = Issues::default();
        assert!(t.next_row(&mut issues));
        assert_eq!(
            t.number_in(1, 0.0, f64::MAX, NumberKind::Plain, &mut issues),
            None
        );
        let shown = issues.items()[0].to_string();
        assert!(
            shown.ends_with("expected a number at least 0, found -3"),
            "{shown}"
        );
    }
}
