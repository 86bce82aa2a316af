//! `plot` and `check --draw`: the plots and the crossover drawn, as files beside the reports.

use std::path::Path;

use super::{analyse, done, load, read_by, where_written, PlotFormat, FAILURE, OK, PROBLEMS, USAGE};
use crate::model::Job;
use crate::report;

pub fn plot(path: &Path, dir: &Path, format: PlotFormat) -> u8 {
    let (job, f) = match load(path).and_then(|job| analyse(path, &job).map(|f| (job, f))) {
        Ok(both) => both,
        Err(c) => return c,
    };
    if let Err(e) = std::fs::create_dir_all(dir) {
        say_err!("voicekeep: cannot create {}: {e}", dir.display());
        return FAILURE;
    }
    let mut written = String::new();
    // Named after the job, so the plots of several jobs can share a folder.
    let stem = if path.as_os_str() == "-" { "standard-input".into() } else { path.file_stem().map(|s| s.to_string_lossy().into_owned()).unwrap_or_else(|| "job".into()) };
    // The plots, then the crossover drawn: as designed, as left, each option as proposed.
    let mut drawings: Vec<(String, String)> = report::plots::all_outcome(&job, &f).into_iter().map(|(k, svg)| (k.name().to_string(), svg)).collect();
    for v in crate::schematic::view::views(&job, &f, false) {
        let svg = crate::schematic::svg::render(&crate::schematic::layout::layout(&v.circuit), &v.circuit);
        drawings.push((format!("schematic-{}", v.name), svg));
    }
    for (name, svg) in drawings {
        let (file, bytes) = match format {
            PlotFormat::Svg => (dir.join(format!("{stem}-{name}.svg")), svg.into_bytes()),
            PlotFormat::Png => match report::plots::svg_to_png(&svg) {
                Ok(b) => (dir.join(format!("{stem}-{name}.png")), b),
                Err(e) => {
                    say_err!("voicekeep: internal error drawing {name}.png: {e}; please report this");
                    return FAILURE;
                }
            },
        };
        if read_by(path, &job).contains(&where_written(&file)) {
            say_err!("{}: the plot would overwrite {}, one of the job's own inputs", path.display(), file.display());
            say_err!("  hint: write the plots to another folder with --out");
            return PROBLEMS;
        }
        if let Err(e) = report::write_atomically(&file, &bytes) {
            say_err!("voicekeep: cannot write {}: {e}", file.display());
            return FAILURE;
        }
        written.push_str(&format!("wrote {}\n", file.display()));
    }
    done(&written)
}

/// Writes the network as typed, drawn, beside the job as JOB-schematic.svg.
pub fn draw_typed(path: &Path, job: &Job) -> Result<(), u8> {
    if path.as_os_str() == "-" {
        say_err!("voicekeep: --draw writes the drawing beside the job file, and a job read from standard input has none");
        say_err!("  hint: save the job to a file and check that");
        return Err(USAGE);
    }
    let stem = path.file_stem().map(|s| s.to_string_lossy().into_owned()).unwrap_or_else(|| "job".into());
    let file = path.with_file_name(format!("{stem}-schematic.svg"));
    let c = crate::schematic::view::circuit(&job.network);
    let svg = crate::schematic::svg::render(&crate::schematic::layout::layout(&c), &c);
    if read_by(path, job).contains(&where_written(&file)) {
        say_err!("{}: the drawing would overwrite {}, one of the job's own inputs", path.display(), file.display());
        return Err(PROBLEMS);
    }
    report::write_atomically(&file, svg.as_bytes()).map_err(|e| {
        say_err!("voicekeep: cannot write {}: {e}", file.display());
        FAILURE
    })?;
    match done(&format!("drew {}\n", file.display())) {
        OK => Ok(()),
        code => Err(code),
    }
}
