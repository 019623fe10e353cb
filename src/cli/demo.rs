//! `chordline demo`: run the whole job on the bundled demo survey.

use super::Failure;
use super::run::{execute, print_outcome};
use chordline::pipeline::Options;
use chordline::survey::Rail;
use clap::Args;
use std::path::PathBuf;

/// The bundled demo survey, relative to the crate root.
const DEMO_SURVEY: &str = "demo-data/eastvale-survey.csv";

/// Options of `chordline demo`.
#[derive(Debug, Args)]
pub struct DemoArgs {
    /// Output folder.
    #[arg(long, default_value = "out/demo")]
    pub out: PathBuf,
    /// Replace the output folder if it exists (the demo always may replace its own default folder).
    #[arg(long)]
    pub force: bool,
}

/// Run `chordline demo`.
pub fn run(a: DemoArgs) -> Result<(), Failure> {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let survey = if std::path::Path::new(DEMO_SURVEY).exists() {
        PathBuf::from(DEMO_SURVEY)
    } else {
        root.join(DEMO_SURVEY)
    };
    eprintln!(
        "demo: the invented Eastvale Branch hand survey (demo-data/README.md): 20 m chord, marks every 10 m on the left rail\n      same as: chordline run {} --chord 20m --rail left --out {}\n",
        survey.display(),
        a.out.display()
    );
    let mut opts = Options::new(20.0, Rail::Left);
    opts.command_line = [
        "chordline",
        "run",
        DEMO_SURVEY,
        "--chord",
        "20m",
        "--rail",
        "left",
    ]
    .map(String::from)
    .to_vec();
    let force = a.force || a.out == std::path::Path::new("out/demo");
    let o = execute(&survey, &opts, &a.out, force)?;
    print_outcome(&o, false);
    Ok(())
}
