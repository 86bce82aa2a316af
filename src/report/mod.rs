//! The PDF service report: the data handed to the template ([`data`]), the plots
//! ([`plots`]), typesetting through an embedded Typst engine with embedded fonts, and atomic
//! writes. Data reaches the template as JSON, never as markup, so nothing from the job file
//! is ever evaluated.

mod axes;
pub mod captions;
pub mod data;
pub mod fonts;
pub mod plots;

use std::fmt;
use std::path::Path;

use typst::foundations::{Datetime, Smart};
use typst::{World, WorldExt};
use typst_as_lib::typst_kit_options::TypstKitFontOptions;
use typst_as_lib::TypstEngine;
use typst_layout::PagedDocument;
use typst_pdf::{PdfOptions, PdfStandard, PdfStandards, Timestamp};

use crate::analysis::Outcome;
use crate::model::{Job, Template};

pub const LIB_TYP: &str = include_str!("../../templates/lib.typ");
pub const CUSTOMER_TYP: &str = include_str!("../../templates/customer.typ");
pub const ARCHIVE_TYP: &str = include_str!("../../templates/archive.typ");
pub const SALE_TYP: &str = include_str!("../../templates/sale.typ");
pub const QUOTE_TYP: &str = include_str!("../../templates/quote.typ");
pub const INVOICE_TYP: &str = include_str!("../../templates/invoice.typ");

/// The most pages a report may have (the built-in templates give 2 to 12 for the samples).
pub const MAX_PAGES: usize = 300;

/// The largest template voicekeep reads (the built-in ones are a few KB each).
pub const MAX_TEMPLATE_BYTES: usize = 1024 * 1024;

/// A template's bytes, refused unless they are UTF-8 text.
pub fn template_text(name: &str, bytes: Vec<u8>) -> Result<Vec<u8>, crate::files::FileError> {
    match std::str::from_utf8(&bytes) {
        Ok(_) => Ok(bytes),
        Err(_) => Err(crate::files::FileError::new(name.to_string(), "it is not UTF-8 text; save the template as UTF-8".into())),
    }
}

#[derive(Debug)]
pub enum ReportError {
    /// The template has errors; each with its file, line and column.
    Template { messages: Vec<String> },
    /// The PDF could not be written out (an internal problem).
    Pdf(String),
}

impl fmt::Display for ReportError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ReportError::Template { messages } => write!(f, "the report template has problems:\n{}", messages.join("\n")),
            ReportError::Pdf(m) => write!(f, "internal error writing the PDF: {m}; please report this"),
        }
    }
}

impl std::error::Error for ReportError {}

/// Renders the report of a job of one cabinet or several to PDF bytes. The same job and
/// findings always give the same bytes.
pub fn render_outcome(job: &Job, outcome: &Outcome, template: &Template) -> Result<Vec<u8>, ReportError> {
    let archive = matches!(template, Template::Archive);
    let doc = typeset(job, outcome, template)?;
    let d = job.info.date;
    let date = Datetime::from_ymd(d.year, d.month, d.day);
    let standards = if archive { PdfStandards::new(&[PdfStandard::A_3b]).map_err(|e| ReportError::Pdf(format!("{e:?}")))? } else { PdfStandards::default() };
    let options = PdfOptions {
        ident: Smart::Custom(format!("voicekeep {} {}", job.info.number, job.info.date)),
        creator: Smart::Custom(Some(format!("voicekeep {}", crate::results::VERSION))),
        timestamp: date.map(Timestamp::new_utc),
        standards,
        ..Default::default()
    };
    typst_pdf::pdf(&doc, &options).map_err(|diags| ReportError::Pdf(diags.iter().map(|d| d.message.to_string()).collect::<Vec<_>>().join("; ")))
}

/// Where a layout mark of the built-in templates fell: `kind` is what the template marked
/// (`table` where a table starts, `row` at each of its body rows, `end` after it; `figure`
/// at a figure's top and `figure-end` below its caption), `page` counts from 1 and `y` is
/// points down from the page's top edge. The marks are invisible; the tests read them to
/// check the layout a reader sees (no table split by a figure, no row alone at a page's foot).
#[derive(Debug, Clone, PartialEq)]
pub struct Mark {
    pub kind: String,
    pub page: usize,
    pub y: f64,
}

/// The layout marks of a report, in the document's order.
pub fn layout_marks(job: &Job, outcome: &Outcome, template: &Template) -> Result<Vec<Mark>, ReportError> {
    use typst::foundations::{Label, Selector};
    use typst::introspection::{Introspector, MetadataElem};
    let doc = typeset(job, outcome, template)?;
    let label = Label::new(typst::utils::PicoStr::intern("vk-mark")).expect("a label's name is not empty");
    let introspector = doc.introspector();
    let found = introspector.query(&Selector::Label(label));
    Ok(found
        .iter()
        .filter_map(|c| {
            let kind = c.to_packed::<MetadataElem>()?.value.clone().cast::<typst::foundations::Str>().ok()?.to_string();
            let at = introspector.position(c.location()?)?;
            Some(Mark { kind, page: at.page.get(), y: at.point.y.to_pt() })
        })
        .collect())
}

/// The drawings of the crossover a template shows, laid out and written as SVG: the
/// customer's report and the sale sheet the speaker as it is now (as left, or as found with
/// no work done), the archive every view, the quotation what it proposes.
pub fn schematics_for(job: &Job, outcome: &Outcome, template: &Template) -> Vec<(crate::schematic::view::View, crate::schematic::Drawing, String)> {
    let quote = matches!(template, Template::Quote);
    let all = crate::schematic::view::views(job, outcome, quote);
    let now = if all.iter().any(|v| v.name == "as-left") { "as-left" } else { "designed" };
    let only = all.len() == 1;
    let keep = |name: &str| match template {
        Template::Customer | Template::Sale => name == now,
        Template::Invoice => false,
        Template::Quote => name != "designed" || only,
        Template::Archive | Template::File { .. } => true,
    };
    all.into_iter()
        .filter(|v| keep(&v.name))
        .map(|v| {
            let d = crate::schematic::layout::layout(&v.circuit);
            let svg = crate::schematic::svg::render(&d, &v.circuit);
            (v, d, svg)
        })
        .collect()
}

/// Lays out the report: the template over the report's data, plots and inputs.
fn typeset(job: &Job, outcome: &Outcome, template: &Template) -> Result<PagedDocument, ReportError> {
    let (main_name, main_text) = match template {
        Template::Customer => ("customer.typ".to_string(), CUSTOMER_TYP.to_string()),
        Template::Archive => ("archive.typ".to_string(), ARCHIVE_TYP.to_string()),
        Template::Sale => ("sale.typ".to_string(), SALE_TYP.to_string()),
        Template::Quote => ("quote.typ".to_string(), QUOTE_TYP.to_string()),
        Template::Invoice => ("invoice.typ".to_string(), INVOICE_TYP.to_string()),
        // A shop template's text came in with the job: rendering reads nothing from disk.
        Template::File { name, text } => (std::path::Path::new(name).file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_else(|| "template.typ".into()), text.clone()),
    };
    let results = serde_json::to_vec_pretty(&crate::results::json_outcome(job, outcome)).map_err(|e| ReportError::Pdf(e.to_string()))?;
    let plots = plots::all_outcome(job, outcome);
    let kinds: Vec<crate::model::PlotKind> = plots.iter().map(|(k, _)| *k).collect();
    let mut report_data = match outcome {
        Outcome::One(f) => data::build(job, f, template, &kinds),
        Outcome::Set(set) => data::build_set(job, set, template, &kinds),
    };
    let views = schematics_for(job, outcome, template);
    report_data.schematics =
        views.iter().map(|(v, d, _)| data::SchematicData { name: v.name.clone(), caption: v.caption.clone(), width_pt: (d.width as f64 * 0.75).min(470.0) }).collect();
    // Every text the template sets, with any character no font has replaced (`check` warns
    // of each): a missing glyph would print as an empty box, and the archive's PDF/A refuses it.
    let mut data_value = serde_json::to_value(&report_data).map_err(|e| ReportError::Pdf(e.to_string()))?;
    legible_strings(&mut data_value);
    let data_json = serde_json::to_vec(&data_value).map_err(|e| ReportError::Pdf(e.to_string()))?;

    let mut binaries: Vec<(String, Vec<u8>)> = vec![("data.json".into(), data_json), ("results.json".into(), results)];
    for (kind, svg) in plots {
        binaries.push((format!("plots/{}.svg", kind.name()), svg.into_bytes()));
    }
    for (v, _, svg) in views {
        binaries.push((format!("plots/schematic-{}.svg", v.name), svg.into_bytes()));
    }
    for (i, input) in job.inputs.iter().enumerate() {
        binaries.push((format!("inputs/{i}"), input.bytes.clone()));
    }
    let engine = TypstEngine::builder()
        .fonts(fonts::EXTRA.iter().map(|b| typst::foundations::Bytes::new(*b)))
        .search_fonts_with(TypstKitFontOptions::default().include_system_fonts(false).include_embedded_fonts(true))
        .with_static_source_file_resolver([("lib.typ", LIB_TYP.to_string()), (main_name.as_str(), main_text.clone())])
        .with_static_file_resolver(binaries.iter().map(|(n, b)| (n.as_str(), b.as_slice())))
        .build();
    let d = job.info.date;
    let date = Datetime::from_ymd(d.year, d.month, d.day);
    let doc = engine
        .with_world(main_name.as_str(), |world| {
            // The template's "today" is the job's date, never the clock.
            let world = Dated { inner: world, date };
            typst::compile::<PagedDocument>(&world).output.map_err(|diags| template_error(&world, &diags))
        })
        .map_err(|e| ReportError::Template { messages: vec![format!("{main_name}: {e}")] })??;
    if doc.pages().len() > MAX_PAGES {
        return Err(ReportError::Template {
            messages: vec![format!("{main_name}: the report would run to {} pages, above the {MAX_PAGES} a report may have; no report was written", doc.pages().len())],
        });
    }
    Ok(doc)
}

/// A Typst world whose today is the job's date: a template calling `datetime.today()` gets
/// the same date on every run, so the same inputs give the same bytes.
struct Dated<'w, W: World> {
    inner: &'w W,
    date: Option<Datetime>,
}

impl<W: World> World for Dated<'_, W> {
    fn library(&self) -> &typst::utils::LazyHash<typst::Library> {
        self.inner.library()
    }
    fn book(&self) -> &typst::utils::LazyHash<typst::text::FontBook> {
        self.inner.book()
    }
    fn main(&self) -> typst::syntax::FileId {
        self.inner.main()
    }
    fn source(&self, id: typst::syntax::FileId) -> typst::diag::FileResult<typst::syntax::Source> {
        self.inner.source(id)
    }
    fn file(&self, id: typst::syntax::FileId) -> typst::diag::FileResult<typst::foundations::Bytes> {
        self.inner.file(id)
    }
    fn font(&self, index: usize) -> Option<typst::text::Font> {
        self.inner.font(index)
    }
    fn today(&self, _offset: Option<typst::foundations::Duration>) -> Option<Datetime> {
        self.date
    }
}

/// Replaces, in every string of `v`, the characters no font of the report has, and ties each
/// figure to its unit so a line never ends between "5.72" and "Ω".
fn legible_strings(v: &mut serde_json::Value) {
    match v {
        serde_json::Value::String(s) => {
            if let std::borrow::Cow::Owned(t) = fonts::legible(s) {
                *s = t;
            }
            if let Some(t) = tie_units(s) {
                *s = t;
            }
        }
        serde_json::Value::Array(a) => a.iter_mut().for_each(legible_strings),
        serde_json::Value::Object(o) => o.values_mut().for_each(legible_strings),
        _ => {}
    }
}

/// The units a figure is printed with: the space before one, after a digit, becomes a
/// non-breaking space. None when `s` has no such space.
fn tie_units(s: &str) -> Option<String> {
    const UNITS: [&str; 24] = ["Ω", "mΩ", "kΩ", "MΩ", "Hz", "kHz", "W", "mW", "kW", "V", "mV", "A", "mA", "dB", "dBFS", "F", "µF", "nF", "pF", "H", "mH", "µH", "%", "°C"];
    let bytes = s.as_bytes();
    let mut out: Option<String> = None;
    let mut last = 0;
    for (i, _) in s.match_indices(' ') {
        if i == 0 || !bytes[i - 1].is_ascii_digit() {
            continue;
        }
        let rest = &s[i + 1..];
        let word = rest.split(|c: char| !(c.is_alphanumeric() || matches!(c, 'Ω' | 'µ' | '%' | '°'))).next().unwrap_or("");
        if UNITS.contains(&word) {
            let o = out.get_or_insert_with(String::new);
            o.push_str(&s[last..i]);
            o.push('\u{a0}');
            last = i + 1;
        }
    }
    out.map(|mut o| {
        o.push_str(&s[last..]);
        o
    })
}

/// Typst's diagnostics carry spans, not places: turn them into `file:line:column: message`.
fn template_error(world: &dyn World, diags: &[typst::diag::SourceDiagnostic]) -> ReportError {
    let place = |span: typst::syntax::DiagSpan| -> String {
        let Some(id) = span.id() else { return "template".to_string() };
        let path = id.vpath().get_without_slash().to_string();
        let (Some(range), Ok(source)) = (world.range(span), world.source(id)) else { return path };
        match source.lines().byte_to_line_column(range.start) {
            Some((line, col)) => format!("{path}:{}:{}", line + 1, col + 1),
            None => path,
        }
    };
    let messages = diags
        .iter()
        .map(|d| {
            let mut m = format!("{}: {}", place(d.span), d.message);
            for h in &d.hints {
                m.push_str(&format!("\n  hint: {}", h.v));
            }
            m
        })
        .collect();
    ReportError::Template { messages }
}

/// Writes `bytes` to `path` so that `path` only ever holds its old contents or all of the new,
/// and an interrupted run (a crash, Ctrl-C, SIGKILL, a full disk) leaves no partial file
/// behind. On Linux the bytes go to an unnamed file in the target's folder (`O_TMPFILE`),
/// which vanishes with the process if it dies; once written and synced it is linked under a
/// staging name of this process's own (`.NAME.PID-N.voicekeep-new`) and renamed over `path`.
/// Where the folder's file system has no unnamed files (network and FAT file systems), and
/// elsewhere than Linux, the bytes are written under such a staging name and renamed. Runs
/// writing the same report at once each stage under their own name, and the last rename
/// wins. A run killed between staging and renaming leaves its staging file; the next run
/// that writes the same report removes it (on Linux, where a staging file's process can be
/// seen to be gone).
pub fn write_atomically(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let dir = path.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new("."));
    // The rename would put the file in the place of a device, a pipe or a folder's link.
    if let Ok(m) = std::fs::symlink_metadata(path) {
        if !m.is_file() {
            return Err(std::io::Error::other("it exists and is not a regular file (a folder, a link, a device or a pipe); choose another name"));
        }
    }
    let name = path.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_default();
    remove_stale(dir, &name);
    let staged = dir.join(staging_name(&name));
    #[cfg(target_os = "linux")]
    if let Some(done) = unnamed::write(dir, path, &staged, bytes) {
        return done;
    }
    let written = (|| {
        let mut file = std::fs::OpenOptions::new().write(true).create_new(true).open(&staged)?;
        write_paced(&mut file, bytes)?;
        file.sync_all()?;
        std::fs::rename(&staged, path)
    })();
    if written.is_err() {
        let _ = std::fs::remove_file(&staged);
    }
    written
}

const STAGING_SUFFIX: &str = ".voicekeep-new";

/// A staging name no other run uses at the same moment: the report's name, this process's
/// id and a count of this process's writes.
fn staging_name(name: &str) -> String {
    static COUNT: std::sync::atomic::AtomicU64 = std::sync::atomic::AtomicU64::new(0);
    let n = COUNT.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
    format!(".{name}.{}-{n}{STAGING_SUFFIX}", std::process::id())
}

/// Removes the staging files a killed run left beside the report `name`: those whose
/// process is gone. Only where processes can be seen (`/proc`); elsewhere they are left.
fn remove_stale(dir: &Path, name: &str) {
    if !Path::new("/proc/self").exists() {
        return;
    }
    let Ok(entries) = std::fs::read_dir(dir) else { return };
    let prefix = format!(".{name}.");
    for e in entries.flatten() {
        let file = e.file_name().to_string_lossy().into_owned();
        let Some(middle) = file.strip_prefix(&prefix).and_then(|r| r.strip_suffix(STAGING_SUFFIX)) else { continue };
        let Some(pid) = middle.split('-').next().and_then(|p| p.parse::<u32>().ok()) else { continue };
        if !Path::new(&format!("/proc/{pid}")).exists() {
            let _ = std::fs::remove_file(e.path());
        }
    }
}

/// Writes all of `bytes`. A test hook: with `VOICEKEEP_TEST_WRITE_PAUSE_MS` set, the write
/// goes in 16 pieces with that pause after each, announced on stderr, so that a test can
/// kill the process while the report is being written (tests/it/interrupted.rs).
fn write_paced(file: &mut std::fs::File, bytes: &[u8]) -> std::io::Result<()> {
    use std::io::Write;
    let Some(ms) = std::env::var("VOICEKEEP_TEST_WRITE_PAUSE_MS").ok().and_then(|v| v.parse::<u64>().ok()) else {
        return file.write_all(bytes);
    };
    eprintln!("voicekeep: writing the report in pieces (VOICEKEEP_TEST_WRITE_PAUSE_MS)");
    for piece in bytes.chunks(bytes.len().div_ceil(16).max(1)) {
        file.write_all(piece)?;
        file.flush()?;
        std::thread::sleep(std::time::Duration::from_millis(ms));
    }
    Ok(())
}

#[cfg(target_os = "linux")]
mod unnamed {
    use std::os::fd::AsRawFd;
    use std::path::Path;

    use rustix::fs::{linkat, openat, AtFlags, Mode, OFlags, CWD};

    /// None when the folder cannot hold an unnamed file (or /proc is missing), so the caller
    /// falls back to a named one; otherwise the outcome of the write.
    pub(super) fn write(dir: &Path, path: &Path, staged: &Path, bytes: &[u8]) -> Option<std::io::Result<()>> {
        // The test hook forces the named path, as on a file system without unnamed files.
        if std::env::var_os("VOICEKEEP_TEST_NO_TMPFILE").is_some() {
            return None;
        }
        let fd = openat(CWD, dir, OFlags::WRONLY | OFlags::TMPFILE | OFlags::CLOEXEC, Mode::from_raw_mode(0o644)).ok()?;
        let mut file = std::fs::File::from(fd);
        if let Err(e) = super::write_paced(&mut file, bytes).and_then(|_| file.sync_all()) {
            return Some(Err(e));
        }
        linkat(CWD, format!("/proc/self/fd/{}", file.as_raw_fd()), CWD, staged, AtFlags::SYMLINK_FOLLOW).ok()?;
        Some(std::fs::rename(staged, path).inspect_err(|_| {
            let _ = std::fs::remove_file(staged);
        }))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_figure_is_tied_to_its_unit_and_nothing_else_is() {
        let nb = '\u{a0}';
        assert_eq!(tie_units("is 5.72 Ω (at 12.2 kHz), 15 W or 0.5 dB, 16 % low").unwrap(), format!("is 5.72{nb}Ω (at 12.2{nb}kHz), 15{nb}W or 0.5{nb}dB, 16{nb}% low"));
        // A word that only begins like a unit, or a unit after a word, stays as written.
        assert_eq!(tie_units("2 Westgate Road, Hz 3 Warts"), None);
        assert_eq!(tie_units("no figures here"), None);
        assert_eq!(tie_units("ends 3 V"), Some(format!("ends 3{nb}V")));
    }

    #[test]
    fn atomic_write_replaces_whole_and_leaves_no_temporary() {
        let dir = std::env::temp_dir().join(format!("vk-atomic-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let p = dir.join("r.pdf");
        write_atomically(&p, b"first").unwrap();
        write_atomically(&p, b"second").unwrap();
        assert_eq!(std::fs::read(&p).unwrap(), b"second");
        let left: Vec<_> = std::fs::read_dir(&dir).unwrap().filter_map(|e| e.ok()).map(|e| e.file_name()).collect();
        assert_eq!(left, [std::ffi::OsString::from("r.pdf")], "nothing but the report is left");
        assert!(write_atomically(&dir.join("no-such-dir/r.pdf"), b"x").is_err());
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
