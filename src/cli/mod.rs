//! The command line: clap definition (help grouped by stage), subcommands, terminal output.
//!
//! Flags are parsed into the raw structs of [`args`], merged with a configuration file when one
//! is given ([`config_file`]: the command line takes the place of the file's keys), turned into
//! a validated [`crate::config::RunConfig`] in one place, and handed to [`crate::pipeline`].
//! Results go to standard output, messages to standard error.

pub mod args;
pub mod config_file;

use std::collections::BTreeSet;
use std::ffi::OsString;

use clap::parser::ValueSource;
use clap::{CommandFactory, FromArgMatches};

pub use args::{Cli, Command};
pub use config_file::ConfigFile;

use crate::config::{ConfigError, RunConfig};
use crate::error::Error;

/// Parses the process arguments and runs the chosen subcommand.
pub fn run() -> Result<(), Error> {
    install_interrupt_handler();
    let parsed = parse(std::env::args_os().collect())?;
    let result = run_parsed(parsed);
    if result.is_err() && crate::report::interrupted() {
        // The signal handler is removing the output and will exit with code 130: an error
        // caused by the removal (a file vanished) must not win the race with another code.
        std::thread::sleep(INTERRUPT_GRACE);
    }
    result
}

/// How long a failed run waits for the signal handler to finish and exit.
const INTERRUPT_GRACE: std::time::Duration = std::time::Duration::from_secs(10);

/// A parsed command line: the flags, merged with the configuration file if one was given.
#[derive(Debug)]
pub struct Parsed {
    /// The flags (the file's keys included as flags).
    pub cli: Cli,
    /// The configuration file, if any.
    pub file: Option<ConfigFile>,
    /// The ids of the flags given on the command line itself.
    pub given: BTreeSet<String>,
}

/// Parses `args` (the program name first); clap prints usage errors and `--help` itself and
/// exits. For `run` and `check` with a CONFIG file, the file's keys not given on the command line
/// are added as flags and everything is parsed again.
///
/// # Errors
/// [`ConfigError`] when the configuration file cannot be read or is invalid.
pub fn parse(args: Vec<OsString>) -> Result<Parsed, Error> {
    let matches = Cli::command().get_matches_from(args.clone());
    let Some((_, sub)) = matches.subcommand().filter(|(name, _)| matches!(*name, "run" | "check")) else {
        let cli = Cli::from_arg_matches(&matches).unwrap_or_else(|error| error.exit());
        return Ok(Parsed { cli, file: None, given: BTreeSet::new() });
    };
    let given: BTreeSet<String> = sub
        .ids()
        .filter(|id| sub.value_source(id.as_str()) == Some(ValueSource::CommandLine))
        .map(|id| id.to_string())
        .collect();
    let Some(path) = sub.get_one::<std::path::PathBuf>("config").cloned() else {
        let cli = Cli::from_arg_matches(&matches).unwrap_or_else(|error| error.exit());
        return Ok(Parsed { cli, file: None, given });
    };
    if path.extension().and_then(|extension| extension.to_str()) != Some("toml") {
        return Err(ConfigError::Invalid {
            flag: "CONFIG".into(),
            message: format!(
                "'{}' is not a .toml configuration file; if it is an input file, quote the --inputs \
                 glob so the shell does not expand it",
                path.display()
            ),
        }
        .into());
    }
    let file = ConfigFile::read(&path)?;
    let mut merged = args;
    merged.extend(file.flags(|key| given.contains(key)).into_iter().map(OsString::from));
    let matches = Cli::command().get_matches_from(merged);
    let cli = Cli::from_arg_matches(&matches).unwrap_or_else(|error| error.exit());
    Ok(Parsed { cli, file: Some(file), given })
}

/// Runs a parsed command line.
pub fn run_parsed(parsed: Parsed) -> Result<(), Error> {
    let log = crate::report::Log::new(parsed.cli.quiet, parsed.cli.verbose);
    let Parsed { cli, file, given } = parsed;
    let attribute = |error: ConfigError| match &file {
        Some(file) => file.attribute_with(&given, error),
        None => error,
    };
    match cli.command {
        Command::Run(run) => {
            let config: RunConfig = run.into_config().map_err(attribute)?;
            install_threads(config.threads)?;
            let summary = crate::pipeline::run(&config, &log)?;
            print!("{}", summary.text());
            Ok(())
        }
        Command::Check(check) => {
            let config: RunConfig = check.into_config_for(false).map_err(attribute)?;
            install_threads(config.threads)?;
            let report = crate::check::check(&config);
            print!("{}", report.text());
            if report.passes() {
                Ok(())
            } else {
                Err(Error::CheckFailed { failed: report.failed().join(", ") })
            }
        }
        Command::Partition(partition) => {
            install_threads(partition.threads)?;
            let quality_json = partition.quality_json.clone();
            let outcome = crate::partition::partition(&partition.into_options()?)?;
            if let Some(path) = quality_json {
                let text = serde_json::to_string_pretty(&outcome).expect("the outcome serialises") + "\n";
                crate::maps::write_bytes_atomically(&path, text.as_bytes())?;
            }
            print!("{}", outcome.lines());
            if !cli.quiet {
                eprintln!("{}", outcome.quality_line());
            }
            Ok(())
        }
        Command::Assign(assign) => {
            install_threads(assign.threads)?;
            let options = crate::assign::AssignOptions {
                run: assign.run,
                inputs: assign.inputs,
                out: assign.out.clone(),
                min_confidence: assign.min_confidence,
            };
            let assignments = crate::assign::assign(&options)?;
            let placed = assignments.iter().filter(|a| a.community > 0).count();
            println!(
                "{} participant(s) read; {placed} placed in a community, {} left unassigned (community 0); table: {}",
                assignments.len(),
                assignments.len() - placed,
                assign.out.display()
            );
            Ok(())
        }
        Command::Power(power) => {
            install_threads(power.threads)?;
            let json_path = power.json.clone();
            let report = crate::power::simulate(&power.into_options()?)?;
            if let Some(path) = json_path {
                let text = serde_json::to_string_pretty(&report).expect("the report serialises") + "\n";
                crate::maps::write_bytes_atomically(&path, text.as_bytes())?;
            }
            print!("{}", report.text());
            Ok(())
        }
        Command::Connectivity(connectivity) => {
            install_threads(connectivity.threads)?;
            let options = connectivity.into_options()?;
            let summary = crate::connectivity::run(&options, &log)?;
            print!("{}", summary.text());
            Ok(())
        }
        Command::Report(report) => {
            let path = crate::report::write_report(&report.run_dir)?;
            println!("{}", path.display());
            Ok(())
        }
        Command::Demo(demo) => {
            install_threads(demo.threads)?;
            let text = crate::pipeline::demo(&demo.into_options()?, &log)?;
            print!("{text}");
            Ok(())
        }
        Command::Defaults => {
            print!("{}", config_file::defaults_text());
            Ok(())
        }
        Command::Completions(completions) => {
            let mut command = Cli::command();
            clap_complete::generate(completions.shell, &mut command, "strata", &mut std::io::stdout());
            Ok(())
        }
        Command::Manpage(manpage) => write_manpages(manpage.out_dir.as_deref()),
        Command::Atlases(atlases) => {
            let built_in = atlases.name.as_deref().and_then(crate::atlas::find);
            match (built_in, &atlases.export) {
                (None, _) => print!("{}", crate::atlas::listing()),
                (Some(built_in), None) => print!("{}", crate::atlas::details(built_in)),
                (Some(built_in), Some(folder)) => {
                    for path in crate::atlas::export(built_in, folder, atlases.force)? {
                        println!("{}", path.display());
                    }
                }
            }
            Ok(())
        }
    }
}

/// Prints strata.1, or writes it and one page per subcommand into `out_dir`.
fn write_manpages(out_dir: Option<&std::path::Path>) -> Result<(), Error> {
    let command = Cli::command();
    let io = |path: &std::path::Path| {
        let path = path.to_path_buf();
        move |source| crate::maps::WriteError::Io { path, source }
    };
    match out_dir {
        None => {
            let mut page = Vec::new();
            clap_mangen::Man::new(command).render(&mut page).map_err(io(std::path::Path::new("-")))?;
            use std::io::Write;
            std::io::stdout().write_all(&page).map_err(io(std::path::Path::new("-")))?;
        }
        Some(folder) => {
            std::fs::create_dir_all(folder).map_err(io(folder))?;
            clap_mangen::generate_to(command, folder).map_err(io(folder))?;
        }
    }
    Ok(())
}

/// On Ctrl-C, SIGTERM or SIGHUP: remove the staging folders being written, say so, and exit
/// with [`crate::error::exit_code::INTERRUPTED`]. A second installation attempt (library use)
/// is ignored.
fn install_interrupt_handler() {
    let _ = ctrlc::set_handler(|| {
        let removed = crate::report::remove_staging_folders();
        eprintln!("strata: interrupted; {removed} unfinished output folder(s) removed, nothing else written");
        std::process::exit(crate::error::exit_code::INTERRUPTED);
    });
}

/// Sets the size of rayon's global pool (0 = one thread per core).
fn install_threads(threads: usize) -> Result<(), Error> {
    if threads == 0 {
        return Ok(());
    }
    rayon::ThreadPoolBuilder::new().num_threads(threads).build_global().map_err(|error| {
        crate::config::ConfigError::Invalid {
            flag: "--threads".into(),
            message: format!("could not start {threads} worker threads: {error}"),
        }
        .into()
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::path::{Path, PathBuf};

    fn args(list: &[&str]) -> Vec<OsString> {
        std::iter::once("strata").chain(list.iter().copied()).map(OsString::from).collect()
    }

    fn config_of(parsed: Parsed) -> Result<RunConfig, ConfigError> {
        let Parsed { cli, file, given } = parsed;
        match cli.command {
            Command::Run(run) => run.into_config().map_err(|error| match &file {
                Some(file) => file.attribute_with(&given, error),
                None => error,
            }),
            other => panic!("not a run: {other:?}"),
        }
    }

    fn write(dir: &Path, text: &str) -> PathBuf {
        let path = dir.join("run.toml");
        std::fs::write(&path, text).unwrap();
        path
    }

    #[test]
    fn printed_defaults_parse_back_to_the_default_configuration() {
        let dir = tempfile::tempdir().unwrap();
        let path = write(dir.path(), &config_file::defaults_text());
        let config = config_of(parse(args(&["run", path.to_str().unwrap()])).unwrap()).unwrap();
        // The examples of the required keys, read from the file's folder; everything else default.
        let expected = RunConfig::with_defaults(
            vec![dir.path().join("maps/sub-*_seedmap.nii.gz").to_string_lossy().into_owned()],
            dir.path().join("participants.tsv"),
            "diagnosis",
            ("insomnia", "control"),
            dir.path().join("results"),
        );
        assert_eq!(serde_json::to_value(&config).unwrap(), serde_json::to_value(&expected).unwrap());
    }

    #[test]
    fn command_line_flags_take_the_place_of_the_file_keys() {
        let dir = tempfile::tempdir().unwrap();
        let path = write(
            dir.path(),
            "inputs = \"conn/*.npy\"\nparticipants = \"participants.tsv\"\ngroup_column = \"diagnosis\"\n\
             contrast = \"insomnia,control\"\nout = \"results\"\ntrials = 7\nmethod = \"leiden\"\n\
             densities = [0.1, 0.2]\nforce = true\n",
        );
        let path = path.to_str().unwrap();
        let config = config_of(parse(args(&["run", path])).unwrap()).unwrap();
        assert_eq!((config.trials, config.method.name(), config.force), (7, "leiden", true));
        assert_eq!(config.densities, vec![0.1, 0.2]);
        assert_eq!(config.seed, crate::config::DEFAULT_SEED, "keys the file leaves out keep their default");
        let config = config_of(
            parse(args(&["run", path, "--trials", "3", "--out", "elsewhere", "--densities", "0.3"])).unwrap(),
        )
        .unwrap();
        assert_eq!(config.trials, 3);
        assert_eq!(config.out, PathBuf::from("elsewhere"));
        assert_eq!(config.densities, vec![0.3]);
        assert_eq!(config.method.name(), "leiden");
        // A flag equal to its default still counts as given.
        let config = config_of(parse(args(&["run", path, "--trials", "20"])).unwrap()).unwrap();
        assert_eq!(config.trials, 20);
        // --similarity on the command line replaces the file's inputs instead of conflicting.
        let config = config_of(parse(args(&["run", path, "--similarity", "s.npy"])).unwrap()).unwrap();
        assert!(config.inputs.is_empty());
        assert_eq!(config.similarity, Some(PathBuf::from("s.npy")));
    }

    #[test]
    fn range_errors_name_the_key_when_the_file_set_it() {
        let dir = tempfile::tempdir().unwrap();
        let path = write(
            dir.path(),
            "inputs = \"conn/*.npy\"\nparticipants = \"p.tsv\"\ngroup_column = \"diagnosis\"\n\
             contrast = \"a,b\"\nout = \"results\"\nalpha = 1.5\ndensities = \"0.5,1.5\"\n",
        );
        let shown = path.display().to_string();
        let path = path.to_str().unwrap();
        let error = config_of(parse(args(&["run", path, "--densities", "0.1"])).unwrap()).unwrap_err();
        assert_eq!(
            error.to_string(),
            format!("{shown}: key 'alpha': found 1.5; allowed: 1.5 must lie strictly between 0 and 1")
        );
        let error = config_of(parse(args(&["run", path, "--alpha", "0.01"])).unwrap()).unwrap_err();
        assert_eq!(
            error.to_string(),
            format!(
                "{shown}: key 'densities': found \"0.5,1.5\"; allowed: density 1.5 is outside (0, 1]; \
                 densities are fractions of all participant pairs"
            )
        );
        // The same error from the command line names the flag.
        let error = config_of(parse(args(&["run", path, "--alpha", "2", "--densities", "0.1"])).unwrap())
            .unwrap_err();
        assert_eq!(error.to_string(), "--alpha: 2 must lie strictly between 0 and 1");
    }

    #[test]
    fn missing_required_values_name_flag_and_key() {
        let dir = tempfile::tempdir().unwrap();
        let path =
            write(dir.path(), "inputs = \"conn/*.npy\"\nparticipants = \"p.tsv\"\ncontrast = \"a,b\"\n");
        let error =
            config_of(parse(args(&["run", path.to_str().unwrap(), "--out", "o"])).unwrap()).unwrap_err();
        assert_eq!(
            error.to_string(),
            "--group-column: required; give --group-column COLUMN on the command line or group_column = ... \
             in a configuration file"
        );
        let error = parse(args(&["run", "sub-02_conn.npy"])).unwrap_err().to_string();
        assert!(error.starts_with("CONFIG: 'sub-02_conn.npy' is not a .toml configuration file"), "{error}");
        let error = parse(args(&["run", "absent.toml"])).unwrap_err().to_string();
        assert!(error.starts_with("absent.toml: cannot read the configuration file: "), "{error}");
    }
}
