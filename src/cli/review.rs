//! `zsift review`: walk a queue in the terminal and decide with the keyboard.

use anyhow::Context;
use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::sync::Arc;
use zsift::decisions::{Log, observer_name, replay};
use zsift::identify::{Identifier, Settings};
use zsift::physics::bary::BaryOverrides;
use zsift::queue::Queue;
use zsift::spectrum::{MediumChoice, ReadOptions};
use zsift::tui::app::{App, Target};
use zsift::tui::config::{self, Config};
use zsift::tui::decision_log::{DecisionLog, state_of};
use zsift::tui::theme::Theme;
use zsift::tui::worker::Core;

/// Medium for files that do not declare one.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum MediumArg {
    /// Use what the file declares (the reader's documented default otherwise).
    Auto,
    /// Undeclared wavelengths are in air.
    Air,
    /// Undeclared wavelengths are in vacuum.
    Vacuum,
}

/// Display options shared by `review` and `demo`.
#[derive(Debug, Clone, clap::Args)]
pub struct Display {
    /// Your name, written into every decision (default: config, then $USER).
    #[arg(long, value_name = "NAME")]
    pub observer: Option<String>,
    /// Theme: standard, contrast, mono, night, or a file stem in the config
    /// folder's themes/ (default: config, or mono when NO_COLOR is set).
    #[arg(long, value_name = "NAME")]
    pub theme: Option<String>,
    /// Plain ASCII plot and labels, even on a UTF-8 terminal.
    #[arg(long)]
    pub ascii: bool,
    /// Stay on a target after deciding it (default: go on to the next
    /// undecided one).
    #[arg(long)]
    pub stay: bool,
    /// Print where the config file is read from and a documented example,
    /// then exit.
    #[arg(long)]
    pub print_config: bool,
}

/// Options of `zsift review`.
#[derive(Debug, clap::Args)]
pub struct Args {
    /// What to review: a queue file, a scan output (JSON Lines), a folder of
    /// spectra, or spectrum files.
    #[arg(value_name = "INPUT", required_unless_present = "print_config")]
    pub inputs: Vec<PathBuf>,
    /// The decision-log folder (default: config log_dir, else a folder
    /// beside the queue).
    #[arg(long, value_name = "DIR")]
    pub log: Option<PathBuf>,
    /// Medium of wavelengths in files that do not declare one.
    #[arg(long, value_enum, value_name = "MEDIUM", default_value = "auto")]
    pub medium: MediumArg,
    /// Display and identity options.
    #[command(flatten)]
    pub display: Display,
    /// What the barycentric correction needs, for files that lack it.
    #[command(flatten)]
    pub bary: super::bary_opts::BaryOpts,
}

/// Print the config location and example (for `--print-config`).
pub fn print_config() -> u8 {
    match config::default_path() {
        Some(p) => println!("# config file: {}", p.display()),
        None => println!("# no home folder known: set ZSIFT_CONFIG to a file"),
    }
    print!("{}", config::EXAMPLE);
    0
}

/// Everything the review needs, resolved from options and config.
pub struct Session {
    /// The queue entries.
    pub targets: Vec<Target>,
    /// The decision-log folder.
    pub log_dir: PathBuf,
    /// Reader options.
    pub read: ReadOptions,
    /// What the user supplied for the barycentric correction, with the
    /// configured named sites.
    pub bary: BaryOverrides,
}

/// Open the review on `session` in the terminal; returns the exit code.
pub fn run_session(session: Session, display: &Display) -> anyhow::Result<u8> {
    let cfg_path = config::default_path();
    let cfg = match &cfg_path {
        Some(p) => Config::load(p)?,
        None => Config::default(),
    };
    let observer = observer_name(display.observer.as_deref().or(cfg.observer.as_deref()));
    let theme_name = display
        .theme
        .clone()
        .or_else(|| config::no_color().then(|| "mono".to_string()))
        .or_else(|| cfg.theme.clone())
        .unwrap_or_else(|| "standard".to_string());
    let theme = Theme::find(
        &theme_name,
        config::theme_dir(cfg_path.as_deref()).as_deref(),
    )?;
    let mut keys = zsift::tui::keys::KeyMap::default();
    for (action, k) in &cfg.keys {
        keys.rebind(action, k)
            .with_context(|| format!("config {}", display_path(cfg_path.as_deref())))?;
    }

    let log = Log::open(&session.log_dir)
        .with_context(|| format!("opening the decision log {}", session.log_dir.display()))?;
    let replayed = replay(&session.log_dir)
        .with_context(|| format!("reading the decision log {}", session.log_dir.display()))?;
    for p in replayed.problems.iter().take(5) {
        eprintln!("zsift: log: {}", zsift::text::clean(&p.to_string()));
    }
    let (decisions, notes) = state_of(&replayed, &session.targets);

    let catalogue = zsift::lines::builtin();
    let identifier = Identifier::new(&catalogue, Settings::default());
    let mut app = App::new(session.targets, decisions, Arc::new(catalogue));
    app.notes = notes;
    app.keys = keys;
    app.theme = theme;
    app.ascii = display.ascii || cfg.ascii || !config::locale_is_utf8();
    app.advance = !display.stay && cfg.advance.unwrap_or(true);
    app.follow_cursor = cfg.follow_cursor.unwrap_or(false);
    app.observer = observer.clone();

    let analyser = Arc::new(Core {
        identifier,
        read: session.read,
        bary: session.bary,
    });
    let mut journal = DecisionLog::new(log, &observer);
    let summary = zsift::tui::run::run(app, analyser, &mut journal)?;
    if let Some(why) = &summary.stopped_by {
        eprintln!("zsift: {}", zsift::text::clean(why));
    }
    println!(
        "{} entries written this session; {} of {} targets decided. Log: {}",
        summary.written,
        summary.decided,
        summary.total,
        session.log_dir.display()
    );
    Ok(0)
}

fn display_path(p: Option<&Path>) -> String {
    p.map(|p| p.display().to_string()).unwrap_or_default()
}

/// The queue entries of a [`Queue`], names cleaned for the screen.
pub fn targets_of(queue: &Queue) -> Vec<Target> {
    queue
        .iter()
        .map(|item| Target {
            name: item.target.clone(),
            path: item.path.clone(),
            bary: item.bary.clone(),
        })
        .collect()
}

/// Run `zsift review`; returns the exit code.
pub fn run(args: &Args) -> anyhow::Result<u8> {
    if args.display.print_config {
        return Ok(print_config());
    }
    if !(std::io::stdin().is_terminal() && std::io::stdout().is_terminal()) {
        anyhow::bail!(
            "`zsift review` needs a terminal on stdin and stdout; for scripts use `zsift scan` (answers) and `zsift decide` (decisions)"
        );
    }
    let queue = if args.inputs.len() == 1 {
        Queue::open(&args.inputs[0])?
    } else {
        Queue::from_paths(&args.inputs)?
    };
    for (line, problem) in queue.problems.iter().take(5) {
        eprintln!("zsift: queue line {line}: {}", zsift::text::clean(problem));
    }
    if queue.is_empty() {
        anyhow::bail!("nothing to review: the queue is empty");
    }
    let cfg = config::default_path()
        .map(|p| Config::load(&p))
        .transpose()?
        .unwrap_or_default();
    let log_dir = args
        .log
        .clone()
        .or(cfg.log_dir.clone())
        .unwrap_or_else(|| queue.default_log_dir());
    let bary = match args.bary.overrides(cfg.named_sites()?) {
        Ok(b) => b,
        Err(e) => {
            // A bad --obs-time, --exptime or --site is a usage error.
            eprintln!("zsift review: {}", zsift::text::clean(&format!("{e:#}")));
            return Ok(2);
        }
    };
    let medium = match args.medium {
        MediumArg::Auto => MediumChoice::Auto,
        MediumArg::Air => MediumChoice::Air,
        MediumArg::Vacuum => MediumChoice::Vacuum,
    };
    run_session(
        Session {
            targets: targets_of(&queue),
            log_dir,
            read: ReadOptions { medium },
            bary,
        },
        &args.display,
    )
}
