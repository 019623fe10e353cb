//! `chordline batch`: many surveys with the same set-up, in parallel, one
//! output folder per survey.

use super::Failure;
use super::run::RunArgs;
use chordline::pipeline;
use clap::Args;
use std::io::{IsTerminal, Write};
use std::path::PathBuf;
use std::sync::Mutex;
use std::sync::atomic::{AtomicUsize, Ordering};

/// Options of `chordline batch`: the set-up options of `run`, applied to every survey.
#[derive(Debug, Args)]
pub struct BatchArgs {
    /// Survey files; each gets its own folder OUT/<file name without extension>.
    #[arg(required = true)]
    pub surveys: Vec<PathBuf>,
    /// Number of surveys processed at once (default: the number of threads); they share the --threads pool.
    #[arg(long)]
    pub jobs: Option<usize>,
    /// Set-up shared by every survey (as for `run`; --out is the parent folder).
    #[command(flatten)]
    pub run: RunArgs,
}

/// Run `chordline batch`.
pub fn run(a: BatchArgs) -> Result<(), Failure> {
    let mut opts = a.run.options()?;
    let mut seen = std::collections::HashSet::new();
    for s in &a.surveys {
        let stem = s.file_stem().map(|x| x.to_owned()).unwrap_or_default();
        if !seen.insert(stem.clone()) {
            return Err(Failure::Input(anyhow::anyhow!(
                "two surveys would share the output folder {}: rename one of them",
                a.run.out.join(stem).display()
            )));
        }
    }
    // One pool for everything: the surveys at once (lanes) and each one's
    // fit share its threads, so --jobs times the fit's threads never
    // oversubscribes the machine.
    let threads = super::util::thread_pool(a.run.threads.or(a.jobs));
    if let Some(f) = &mut opts.fit {
        f.threads = None;
    }
    let jobs = a.jobs.unwrap_or(threads).clamp(1, a.surveys.len().max(1));
    let next = AtomicUsize::new(0);
    let lines: Mutex<Vec<(usize, String, bool)>> = Mutex::new(Vec::new());
    let progress = Progress::new(a.surveys.len(), a.run.quiet);
    rayon::scope(|scope| {
        for _ in 0..jobs {
            scope.spawn(|_| {
                loop {
                    let i = next.fetch_add(1, Ordering::Relaxed);
                    let Some(path) = a.surveys.get(i) else { break };
                    let out = a.run.out.join(path.file_stem().unwrap_or(path.as_os_str()));
                    let line = match pipeline::run(path, &opts, &out, a.run.force) {
                        Ok(o) => {
                            let n = o.results.fit.as_ref().map_or(0, |f| f.elements.len());
                            let warn = o
                                .results
                                .diagnostics
                                .iter()
                                .filter(|d| d.severity == chordline::diag::Severity::Warning)
                                .count();
                            (
                                i,
                                format!(
                                    "ok      {}: {} stations, {n} elements, {warn} warnings -> {}",
                                    path.display(),
                                    o.results.plan.stations.len(),
                                    o.folder.display()
                                ),
                                true,
                            )
                        }
                        Err(e) => {
                            // Most messages name the survey already.
                            let e = e.to_string();
                            let name = path.display().to_string();
                            let text = if e.starts_with(&name) {
                                format!("failed  {e}")
                            } else {
                                format!("failed  {name}: {e}")
                            };
                            (i, text, false)
                        }
                    };
                    progress.finished(&line.1);
                    if let Ok(mut l) = lines.lock() {
                        l.push(line);
                    }
                }
            });
        }
    });
    progress.done();
    let mut lines = lines.into_inner().unwrap_or_default();
    lines.sort_by_key(|l| l.0);
    let failed = lines.iter().filter(|l| !l.2).count();
    // The results, in the order given, on standard output.
    let mut text = String::new();
    for (_, l, _) in &lines {
        text.push_str(l);
        text.push('\n');
    }
    text.push_str(&format!(
        "{} of {} surveys done, {failed} failed\n",
        lines.len() - failed,
        lines.len()
    ));
    let mut out = std::io::stdout().lock();
    let _ = out.write_all(text.as_bytes()).and_then(|()| out.flush());
    if failed > 0 {
        return Err(Failure::Input(anyhow::anyhow!(
            "{failed} of {} surveys failed (see above); the others were written",
            lines.len()
        )));
    }
    Ok(())
}

/// Progress on standard error while the surveys run: a bar on a terminal,
/// one line per finished survey when standard error is a file or a pipe,
/// nothing with `--quiet`.
enum Progress {
    Bar(indicatif::ProgressBar),
    Lines,
    Quiet,
}

impl Progress {
    fn new(total: usize, quiet: bool) -> Self {
        if quiet {
            return Progress::Quiet;
        }
        if !std::io::stderr().is_terminal() {
            return Progress::Lines;
        }
        let bar = indicatif::ProgressBar::new(total as u64);
        if let Ok(style) = indicatif::ProgressStyle::with_template(
            "{bar:30} {pos}/{len} surveys, {elapsed} ({eta} left) {wide_msg}",
        ) {
            bar.set_style(style);
        }
        Progress::Bar(bar)
    }

    /// One survey finished with the result line `line`.
    fn finished(&self, line: &str) {
        match self {
            Progress::Bar(b) => {
                b.inc(1);
                b.set_message(line.split(':').next().unwrap_or("").to_string());
            }
            Progress::Lines => eprintln!("{line}"),
            Progress::Quiet => {}
        }
    }

    fn done(&self) {
        if let Progress::Bar(b) = self {
            b.finish_and_clear();
        }
    }
}
