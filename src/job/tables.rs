//! The tables a job names (a driver's measured impedance, its acoustic response), read
//! through the job's [`Files`](crate::files::Files): three numeric columns, comma, tab or
//! space separated, `#` comments, an optional header line, frequencies rising.

use crate::job::raw::TableRef;
use crate::job::reader::Ctx;
use crate::model::{ImpedanceTable, InputFile, PriceItem, PriceList, ResponseTable};
use crate::units::{shown, Quantity};

/// The most rows a table may have (a sweep of 100 points per decade over four decades is 400).
pub const MAX_TABLE_ROWS: usize = 100_000;

/// The largest text file a job may name (a table, price list or settings file): room for
/// [`MAX_TABLE_ROWS`] rows of generous width; a larger file is refused before it is read.
pub const MAX_TEXT_FILE_BYTES: usize = 16 * 1024 * 1024;

impl Ctx<'_> {
    /// A shop's price list: a CSV with the header `kind,value,rating,type,unit_price` and one
    /// stock item a line (`#` comments); values and ratings with their units, as in the job.
    pub(crate) fn price_list(&mut self, r: &TableRef, currency: &str) -> Option<PriceList> {
        let (name, text) = self.read_file(r)?;
        let mut items = Vec::new();
        let mut seen: std::collections::HashMap<(String, u64, Option<u64>, String), usize> = Default::default();
        let mut header = false;
        let before = self.diags.len();
        for (i, raw) in text.lines().enumerate() {
            let line = raw.split('#').next().unwrap_or("").trim();
            if line.is_empty() {
                continue;
            }
            let cells: Vec<&str> = line.split(',').map(str::trim).collect();
            let at = format!("{name} line {}", i + 1);
            if !header {
                if cells != ["kind", "value", "rating", "type", "unit_price"] {
                    self.error(
                        r.pos,
                        &r.field,
                        format!("{at}: the first line must be the header kind,value,rating,type,unit_price"),
                        Some("one stock item a line after it, e.g. resistor,2.2 ohm,10 W,cement,0.85".into()),
                    );
                    return None;
                }
                header = true;
                continue;
            }
            if cells.len() != 5 {
                self.error(r.pos, &r.field, format!("{at}: want 5 cells (kind, value, rating, type, unit price), found {}", cells.len()), None);
                continue;
            }
            let kind = cells[0].to_lowercase();
            let (q, rq) = match kind.as_str() {
                "resistor" => (Some(Quantity::Resistance), Some(Quantity::Power)),
                "capacitor" => (Some(Quantity::Capacitance), Some(Quantity::Voltage)),
                "inductor" => (Some(Quantity::Inductance), Some(Quantity::Current)),
                "driver" => (None, Some(Quantity::Power)),
                _ => {
                    self.error(r.pos, &r.field, format!("{at}: unknown kind \"{}\"", cells[0]), Some("resistor, capacitor, inductor or driver".into()));
                    continue;
                }
            };
            let value = match q {
                Some(q) => match crate::units::parse_value(cells[1], q) {
                    Ok(v) => v,
                    Err(e) => {
                        self.error(r.pos, &r.field, format!("{at}: value \"{}\": {e}", cells[1]), None);
                        continue;
                    }
                },
                None => 0.0,
            };
            let rating = match (cells[2].is_empty(), rq) {
                (true, _) | (_, None) => None,
                (false, Some(q)) => match crate::units::parse_value(cells[2], q) {
                    Ok(v) => Some(v),
                    Err(e) => {
                        self.error(r.pos, &r.field, format!("{at}: rating \"{}\": {e}", cells[2]), None);
                        continue;
                    }
                },
            };
            let Some(unit_price) = crate::money::Money::parse(cells[4]) else {
                self.error(
                    r.pos,
                    &r.field,
                    format!("{at}: unit price \"{}\" is not a price", cells[4]),
                    Some("a number up to 1000000000 with a point and at most two decimals, such as 0.85, in the list's currency".into()),
                );
                continue;
            };
            // The same stock item twice would be priced by whichever line came first: refused.
            let key = (kind.clone(), value.to_bits(), rating.map(f64::to_bits), cells[3].to_lowercase());
            if let Some(first) = seen.insert(key, i + 1) {
                self.error(
                    r.pos,
                    &r.field,
                    format!("{at}: the same stock item ({} {} {} {}) as line {first}; each item may be priced once", cells[0], cells[1], cells[2], cells[3]),
                    Some("keep one line per item (kind, value, rating and type), with its price".into()),
                );
                continue;
            }
            items.push(PriceItem {
                kind,
                value,
                value_text: cells[1].to_string(),
                rating,
                type_text: (!cells[3].is_empty()).then(|| cells[3].to_string()),
                unit_price,
                line: i + 1,
            });
        }
        if !header {
            self.error(r.pos, &r.field, format!("{name} is empty"), Some("the header kind,value,rating,type,unit_price, then one stock item a line".into()));
        }
        (self.diags.len() == before && header).then(|| PriceList { file: name, currency: currency.to_string(), items })
    }

    /// Reads a file the job names (relative to the job's folder) through the job's files, and
    /// records it for the report.
    pub(crate) fn read_file(&mut self, r: &TableRef) -> Option<(String, String)> {
        match self.files.read(&r.name, MAX_TEXT_FILE_BYTES) {
            Ok(bytes) => {
                let what = if r.field.ends_with("settings") { "settings file" } else { "file" };
                let Ok(text) = std::str::from_utf8(&bytes) else {
                    self.error(r.pos, &r.field, format!("{what} \"{}\" is not UTF-8 text", r.name), Some("save it as UTF-8 (CSV UTF-8 in a spreadsheet)".into()));
                    return None;
                };
                // A byte-order mark, as some spreadsheets write, is not part of the first cell.
                let text = text.trim_start_matches('\u{feff}').to_string();
                // A control character (a NUL in a settings file, an ESC in a cell) is never
                // read as nothing: refused at its line and column.
                if let Some(((line, col), c)) = crate::text::first_forbidden(&text) {
                    self.error(
                        r.pos,
                        &r.field,
                        format!("{what} \"{}\" holds {} at line {}, column {}, a character no input may hold", r.name, crate::text::name_of(c), line, col),
                        Some("remove it; a table, price list or settings file is plain text".into()),
                    );
                    return None;
                }
                if !self.inputs.iter().any(|f| f.name == r.name) {
                    self.inputs.push(InputFile { name: r.name.clone(), bytes });
                }
                Some((r.name.clone(), text))
            }
            Err(e) => {
                let what = if r.field.ends_with("settings") { "settings file" } else { "table file" };
                self.error(r.pos, &r.field, format!("cannot read {what} \"{}\": {}", e.file, e.reason), Some("paths are relative to the job file's folder".into()));
                None
            }
        }
    }

    /// Reads a binary file the job names (a photograph) and records it for the report, byte
    /// for byte.
    pub(crate) fn read_bytes(&mut self, r: &TableRef, what: &str) -> Option<Vec<u8>> {
        match self.files.read(&r.name, crate::model::service::MAX_PHOTO_BYTES) {
            Ok(bytes) => {
                if !self.inputs.iter().any(|f| f.name == r.name) {
                    self.inputs.push(InputFile { name: r.name.clone(), bytes: bytes.clone() });
                }
                Some(bytes)
            }
            Err(e) => {
                self.error(r.pos, &r.field, format!("cannot read {what} \"{}\": {}", e.file, e.reason), Some("paths are relative to the job file's folder".into()));
                None
            }
        }
    }

    /// A table of three numeric columns (comma, tab or space separated; `#` comments).
    fn table(&mut self, r: &TableRef, min_rows: usize) -> Option<(String, [Vec<f64>; 3])> {
        let (node, path) = (r, r.field.as_str());
        let (name, text) = self.read_file(r)?;
        let mut cols: [Vec<f64>; 3] = Default::default();
        let rows = text.lines().filter(|l| !l.split('#').next().unwrap_or("").trim().is_empty()).count();
        if rows > MAX_TABLE_ROWS {
            self.error(
                node.pos,
                path,
                format!("{name} has {rows} rows, above the {MAX_TABLE_ROWS} a table may have"),
                Some("a sweep of a few hundred points per decade is plenty; thin it out".into()),
            );
            return None;
        }
        for (i, line) in text.lines().enumerate() {
            let line = line.split('#').next().unwrap_or("").trim();
            if line.is_empty() {
                continue;
            }
            // Cells are separated by commas, tabs or spaces, or by semicolons (where a
            // spreadsheet writes decimal commas, and a comma inside a cell is one).
            let cells: Vec<&str> = if line.contains(';') {
                line.split(';').map(str::trim).filter(|s| !s.is_empty()).collect()
            } else {
                line.split(|c: char| c == ',' || c.is_whitespace()).filter(|s| !s.is_empty()).collect()
            };
            let nums: Vec<Option<f64>> = cells.iter().map(|c| c.parse::<f64>().ok().filter(|v| v.is_finite())).collect();
            if cols[0].is_empty() && nums.iter().any(|n| n.is_none()) && nums.first().map(|n| n.is_none()).unwrap_or(false) {
                continue; // a header line
            }
            if let Some(cell) = cells.iter().find(|c| c.contains(',')) {
                self.error(
                    node.pos,
                    path,
                    format!(
                        "{name}:{}: \"{}\" has a decimal comma (cells separated by semicolons, as a spreadsheet set to a European locale exports them)",
                        i + 1,
                        crate::text::shorten(cell, 40)
                    ),
                    Some("export the table with decimal points and commas between cells, or replace every `,` with `.` and then every `;` with `,`".into()),
                );
                return None;
            }
            if cells.len() != 3 {
                let spare = if cells.len() > 3 { "; no cell is ignored, so a spare one is refused" } else { "" };
                self.error(node.pos, path, format!("{name}:{}: expected 3 columns (frequency Hz, magnitude, phase deg), found {}{spare}", i + 1, cells.len()), None);
                return None;
            }
            if let Some(bad) = nums.iter().take(3).position(|n| n.is_none()) {
                self.error(
                    node.pos,
                    path,
                    format!("{name}:{}: \"{}\" is not a number", i + 1, cells[bad]),
                    Some("a header line is allowed only before the first row of numbers".into()),
                );
                return None;
            }
            let f = nums[0].unwrap_or(0.0);
            if let Some(&last) = cols[0].last() {
                if f <= last {
                    self.error(
                        node.pos,
                        path,
                        format!("{name}:{}: frequency {} Hz does not rise above the previous row's {} Hz", i + 1, shown(f), shown(last)),
                        Some("sort the table by frequency, lowest first, without repeats".into()),
                    );
                    return None;
                }
            }
            if f <= 0.0 {
                self.error(node.pos, path, format!("{name}:{}: frequency must be above 0 Hz", i + 1), None);
                return None;
            }
            let (lo, hi, range) = Quantity::Frequency.plausible();
            if !(lo..=hi).contains(&f) {
                self.error(node.pos, path, format!("{name}:{}: {} Hz is not a plausible frequency ({range})", i + 1, shown(f)), None);
                return None;
            }
            for (c, n) in cols.iter_mut().zip(nums.iter()) {
                c.push(n.unwrap_or(0.0));
            }
        }
        if cols[0].len() < min_rows {
            self.error(node.pos, path, format!("{name}: {} rows of numbers; at least {min_rows} are needed", cols[0].len()), None);
            return None;
        }
        Some((name, cols))
    }

    /// True, with the error said at the table's reference, when a value of `column` is
    /// `bad`; `message` takes the row's number (from 1) and the value.
    fn refuse_row(&mut self, r: &TableRef, column: &[f64], bad: impl Fn(f64) -> bool, message: impl Fn(usize, f64) -> String, hint: &str) -> bool {
        match column.iter().position(|v| bad(*v)) {
            Some(i) => {
                self.error(r.pos, &r.field, message(i + 1, column[i]), Some(hint.into()));
                true
            }
            None => false,
        }
    }

    /// A driver's measured impedance: frequency Hz, |Z| ohm (above zero), phase deg.
    pub(crate) fn impedance_table(&mut self, r: &TableRef) -> Option<ImpedanceTable> {
        let (file, [fr, ohm, ph]) = self.table(r, 2)?;
        if let Some(i) = ohm.iter().position(|z| *z <= 0.0) {
            self.error(r.pos, &r.field, format!("{file}: row {} has |Z| = {} ohm; impedance magnitudes must be above zero", i + 1, shown(ohm[i])), None);
            return None;
        }
        let (lo, hi, range) = Quantity::Resistance.plausible();
        let columns = "the columns are frequency Hz, |Z| ohm, phase deg";
        if self.refuse_row(r, &ohm, |z| !(lo..=hi).contains(&z), |i, z| format!("{file}: row {i} has |Z| = {} ohm, not a plausible impedance ({range})", shown(z)), columns)
            // A passive impedance lies within +-90 degrees; a meter's wrap may show up to 180.
            || self.refuse_row(r, &ph, |p| p.abs() > 180.0, |i, p| format!("{file}: row {i} has a phase of {} deg; an impedance's phase lies within -180 to +180 deg", shown(p)), columns)
        {
            return None;
        }
        Some(ImpedanceTable { file, freq_hz: fr, ohm, phase_deg: ph })
    }

    /// A driver's acoustic response at 2.83 V, 1 m: frequency Hz, SPL dB, phase deg.
    pub(crate) fn response_table(&mut self, r: &TableRef) -> Option<ResponseTable> {
        let (file, [f, spl, ph]) = self.table(r, 2)?;
        let (lo, hi, range) = Quantity::Decibel.plausible();
        let columns = "the columns are frequency Hz, SPL dB, phase deg";
        if self.refuse_row(r, &spl, |v| !(lo..=hi).contains(&v), |i, v| format!("{file}: row {i} has an SPL of {} dB, not a plausible level ({range})", shown(v)), columns)
            // Acoustic phase may be unwrapped, but not beyond a thousand turns.
            || self.refuse_row(r, &ph, |p| p.abs() > 360_000.0, |i, p| format!("{file}: row {i} has a phase of {} deg, more than a thousand turns", shown(p)), columns)
        {
            return None;
        }
        Some(ResponseTable { file, freq_hz: f, spl_db: spl, phase_deg: ph })
    }
}
