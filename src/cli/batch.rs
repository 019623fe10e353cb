//! `chordline batch`: many surveys with the same set-up, in parallel, one
//! output folder per survey.

use super::Failure;
use super::run::RunArgs;
use chordline::pipeline;
use clap::Args;
use std::path::PathBuf;
use std::sync::Mutex;
use std::sync::atomic::{AtomicUsize, Ordering};

/// Options of `chordline batch`: the set-up options of `run`, applied to every survey.
#[derive(Debug, Args)]
pub struct BatchArgs {
    /// Survey files; each gets its own folder OUT/<file name without extension>.
    #[arg(required = true)]
    pub surveys: Vec<PathBuf>,
    /// Number of surveys processed at once (default: the number of processors).
    #[arg(long)]
    pub jobs: Option<usize>,
    /// Set-up shared by every survey (as for `run`; --out is the parent folder).
    #[command(flatten)]
    pub run: RunArgs,
}

/// Run `chordline batch`.
pub fn run(a: BatchArgs) -> Result<(), Failure> {
    let opts = a.run.options()?;
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
    let jobs = a
        .jobs
        .unwrap_or_else(|| std::thread::available_parallelism().map_or(1, |n| n.get()))
        .clamp(1, a.surveys.len().max(1));
    let next = AtomicUsize::new(0);
    let lines: Mutex<Vec<(usize, String, bool)>> = Mutex::new(Vec::new());
    std::thread::scope(|scope| {
        for _ in 0..jobs {
            scope.spawn(|| {
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
                        Err(e) => (i, format!("failed  {}: {e}", path.display()), false),
                    };
                    if let Ok(mut l) = lines.lock() {
                        l.push(line);
                    }
                }
            });
        }
    });
    let mut lines = lines.into_inner().unwrap_or_default();
    lines.sort_by_key(|l| l.0);
    let failed = lines.iter().filter(|l| !l.2).count();
    for (_, l, _) in &lines {
        eprintln!("{l}");
    }
    eprintln!(
        "{} of {} surveys done, {failed} failed",
        lines.len() - failed,
        lines.len()
    );
    if failed > 0 {
        return Err(Failure::Input(anyhow::anyhow!(
            "{failed} of {} surveys failed (see above); the others were written",
            lines.len()
        )));
    }
    Ok(())
}
