//! The TOML configuration file of `strata run` and `strata check`: one key per long flag.
//!
//! Keys are the long flags of `strata run` in snake_case (`--min-community-size` is
//! `min_community_size`), all at the top level of the file. The file is read, each key checked
//! against the clap definition (unknown keys refused with the list of known ones, each value
//! checked for its type and allowed values), and turned into the flags it stands for; those are
//! parsed by clap together with the command line, a flag given on the command line taking the
//! place of the file's key. Value ranges are checked once, in [`crate::config::RunConfig::validate`];
//! [`ConfigFile::attribute`] turns such an error about a flag the file set into one naming the key.
//! [`defaults_text`] prints the commented default file from the same clap definition, so the
//! file and the flags cannot drift apart.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use crate::config::ConfigError;

/// What a key holds; decides the TOML types accepted and the "allowed" text of messages.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Kind {
    /// A text string (a column name).
    Text,
    /// A file or folder path, relative to the configuration file's folder.
    Path,
    /// A file path as [`Kind::Path`], or a built-in atlas or mask name (kept as written when no
    /// file of that name is in the configuration file's folder: [`crate::atlas`]).
    PathOrName,
    /// One glob pattern or a list of them, relative to the configuration file's folder.
    Globs,
    /// One of the flag's possible values (taken from clap).
    Choice,
    /// A number (integer or float).
    Number,
    /// A whole number, 0 or more.
    Whole,
    /// true or false (a switch flag).
    Switch,
    /// A sweep: a range "START:STOP:STEP" or a list of numbers.
    Sweep,
    /// Two group levels.
    Contrast,
    /// Column names: one string "A,B" or a list of strings.
    Names,
}

/// Every key of the file with its kind, in the order of `strata run --help`. A unit test checks
/// this list against the clap definition of `strata run`.
const KEYS: &[(&str, Kind)] = &[
    ("inputs", Kind::Globs),
    ("similarity", Kind::Path),
    ("participants", Kind::Path),
    ("match_column", Kind::Text),
    ("mask", Kind::PathOrName),
    ("values", Kind::Choice),
    ("transform", Kind::Choice),
    ("variable", Kind::Text),
    ("measures", Kind::Names),
    ("measures_table", Kind::Path),
    ("atlas", Kind::PathOrName),
    ("group_column", Kind::Text),
    ("contrast", Kind::Contrast),
    ("alpha", Kind::Number),
    ("covariates", Kind::Names),
    ("permutations", Kind::Whole),
    ("outcome", Kind::Text),
    ("nuisance", Kind::Names),
    ("graph", Kind::Choice),
    ("densities", Kind::Sweep),
    ("neighbours", Kind::Sweep),
    ("thresholds", Kind::Sweep),
    ("edges", Kind::Choice),
    ("method", Kind::Choice),
    ("trials", Kind::Whole),
    ("resolution", Kind::Number),
    ("min_community_size", Kind::Whole),
    ("consensus_threshold", Kind::Number),
    ("random_graphs", Kind::Whole),
    ("null_draws", Kind::Whole),
    ("subsamples", Kind::Whole),
    ("subsample_fraction", Kind::Number),
    ("out", Kind::Path),
    ("force", Kind::Switch),
    ("seed", Kind::Whole),
    ("threads", Kind::Whole),
];

/// Example values printed (uncommented for required keys, commented for optional ones) in the
/// default file for keys without a default.
const EXAMPLES: &[(&str, &str)] = &[
    ("inputs", r#"["maps/sub-*_seedmap.nii.gz"]"#),
    ("similarity", r#""similarity.npy""#),
    ("participants", r#""participants.tsv""#),
    ("match_column", r#""scan_id""#),
    ("mask", r#""mask.nii.gz""#),
    ("atlas", r#""atlas/regions.tsv""#),
    ("group_column", r#""diagnosis""#),
    ("contrast", r#"["insomnia", "control"]"#),
    ("thresholds", r#""0.2:0.5:0.05""#),
    ("out", r#""results""#),
];

/// Keys a run cannot do without (with `inputs` or `similarity`): printed uncommented.
const REQUIRED: &[&str] = &["inputs", "participants", "group_column", "contrast", "out"];

fn kind_of(key: &str) -> Option<Kind> {
    KEYS.iter().find(|(name, _)| *name == key).map(|(_, kind)| *kind)
}

/// The long flag of a key (`min_community_size` -> `--min-community-size`).
pub fn flag_of(key: &str) -> String {
    format!("--{}", key.replace('_', "-"))
}

/// The key of a flag as spelled in a [`ConfigError::Invalid`] (`--graph absolute` -> `graph`).
fn key_of_flag(flag: &str) -> String {
    flag.trim_start_matches("--").split_whitespace().next().unwrap_or("").replace('-', "_")
}

/// All keys, comma-separated (for messages and the documentation).
pub fn known_keys() -> String {
    KEYS.iter().map(|(key, _)| *key).collect::<Vec<_>>().join(", ")
}

/// The clap definition of `strata run`.
fn run_command() -> clap::Command {
    use clap::CommandFactory;
    crate::cli::Cli::command().find_subcommand("run").cloned().expect("the run subcommand is defined")
}

fn possible_values(key: &str) -> Vec<String> {
    run_command()
        .get_arguments()
        .find(|arg| arg.get_id().as_str() == key)
        .map(|arg| arg.get_possible_values().iter().map(|value| value.get_name().to_string()).collect())
        .unwrap_or_default()
}

fn allowed_text(key: &str, kind: Kind) -> String {
    match kind {
        Kind::Text => "a text string".into(),
        Kind::Path => "a path as a string (relative to the configuration file's folder)".into(),
        Kind::PathOrName => "a path as a string (relative to the configuration file's folder) or a built-in name (`strata atlases` lists them)".into(),
        Kind::Globs => "a glob pattern or a list of them, as strings".into(),
        Kind::Choice => format!("one of {}", possible_values(key).join(", ")),
        Kind::Number => "a number".into(),
        Kind::Whole => "a whole number, 0 or more".into(),
        Kind::Switch => "true or false".into(),
        Kind::Sweep => r#"a range "START:STOP:STEP" or a list of numbers"#.into(),
        Kind::Contrast => r#"two levels of group_column, ["A", "B"] or "A,B""#.into(),
        Kind::Names => r#"column names, ["A", "B"] or "A,B""#.into(),
    }
}

/// A read and checked configuration file.
#[derive(Debug, Clone)]
pub struct ConfigFile {
    path: PathBuf,
    /// Checked values by key, as written in the file.
    values: BTreeMap<String, toml::Value>,
}

impl ConfigFile {
    /// Reads and checks a configuration file.
    ///
    /// # Errors
    /// [`ConfigError::FileRead`] if the file cannot be read; otherwise as [`ConfigFile::parse`].
    pub fn read(path: &Path) -> Result<Self, ConfigError> {
        let text = std::fs::read_to_string(path)
            .map_err(|source| ConfigError::FileRead { path: path.to_path_buf(), source })?;
        Self::parse(path, &text)
    }

    /// Checks the text of a configuration file; `path` is named in messages and anchors relative
    /// paths.
    ///
    /// # Errors
    /// [`ConfigError::FileSyntax`] for text that is not TOML, [`ConfigError::UnknownKey`] for a
    /// key that is not a flag of `strata run`, [`ConfigError::FileValue`] for a value of the wrong
    /// type or outside the flag's possible values.
    pub fn parse(path: &Path, text: &str) -> Result<Self, ConfigError> {
        let table: toml::Table = toml::from_str(text).map_err(|error: toml::de::Error| {
            let line = error.span().map(|span| text[..span.start].matches('\n').count() + 1);
            ConfigError::FileSyntax {
                path: path.to_path_buf(),
                message: error.message().trim_end().to_string()
                    + &line.map(|line| format!(" (line {line})")).unwrap_or_default(),
            }
        })?;
        let mut values = BTreeMap::new();
        for (key, value) in table {
            let Some(kind) = kind_of(&key) else {
                let snake = key.replace('-', "_");
                let hint = if kind_of(&snake).is_some() {
                    format!(" (keys are written in snake_case: did you mean '{snake}'?)")
                } else {
                    String::new()
                };
                return Err(ConfigError::UnknownKey {
                    path: path.to_path_buf(),
                    key,
                    hint,
                    known: known_keys(),
                });
            };
            check_value(path, &key, kind, &value)?;
            values.insert(key, value);
        }
        if values.contains_key("inputs") && values.contains_key("similarity") {
            return Err(ConfigError::FileValue {
                path: path.to_path_buf(),
                key: "similarity".into(),
                found: values["similarity"].to_string(),
                allowed: "either inputs or similarity, not both; remove one of the two keys".into(),
            });
        }
        Ok(ConfigFile { path: path.to_path_buf(), values })
    }

    /// The file's path.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Whether the file sets `key`.
    pub fn sets(&self, key: &str) -> bool {
        self.values.contains_key(key)
    }

    /// The flags the file stands for, leaving out every key for which `given(key)` is true (the
    /// flag is on the command line) and every key that conflicts with such a flag (a
    /// `--similarity` on the command line replaces the file's `inputs`).
    pub fn flags(&self, given: impl Fn(&str) -> bool) -> Vec<String> {
        let command = run_command();
        let mut flags = Vec::new();
        for (key, value) in &self.values {
            if given(key) {
                continue;
            }
            if conflicting(&command, key).iter().any(|other| given(other)) {
                continue;
            }
            let kind = kind_of(key).expect("checked keys");
            let flag = flag_of(key);
            match (kind, value) {
                (Kind::Switch, toml::Value::Boolean(true)) => flags.push(flag),
                (Kind::Switch, _) => {}
                (Kind::Globs, toml::Value::Array(items)) => {
                    for item in items {
                        flags.push(format!("{flag}={}", self.anchored(item.as_str().unwrap_or_default())));
                    }
                }
                (Kind::Globs | Kind::Path, toml::Value::String(text)) => {
                    flags.push(format!("{flag}={}", self.anchored(text)))
                }
                (Kind::PathOrName, toml::Value::String(text)) => {
                    let folder = self.path.parent().unwrap_or(Path::new(""));
                    if crate::atlas::is_builtin_value(text, folder) {
                        flags.push(format!("{flag}={text}"));
                    } else {
                        flags.push(format!("{flag}={}", self.anchored(text)));
                    }
                }
                (Kind::Sweep | Kind::Contrast | Kind::Names, toml::Value::Array(items)) => {
                    let parts: Vec<String> = items.iter().map(scalar_text).collect();
                    flags.push(format!("{flag}={}", parts.join(",")));
                }
                (_, value) => flags.push(format!("{flag}={}", scalar_text(value))),
            }
        }
        flags
    }

    /// A path of the file, relative paths read from the file's folder.
    fn anchored(&self, text: &str) -> String {
        match self.path.parent() {
            Some(folder) if !folder.as_os_str().is_empty() && Path::new(text).is_relative() => {
                folder.join(text).to_string_lossy().into_owned()
            }
            _ => text.to_string(),
        }
    }

    /// Rewrites an error about a flag whose value came from this file (not from the command line)
    /// into one naming the file, the key and the value found.
    pub fn attribute(&self, error: ConfigError, given: impl Fn(&str) -> bool) -> ConfigError {
        if let ConfigError::Invalid { flag, message } = &error {
            let key = key_of_flag(flag);
            if !given(&key) {
                if let Some(value) = self.values.get(&key) {
                    return ConfigError::FileValue {
                        path: self.path.clone(),
                        key,
                        found: value.to_string(),
                        allowed: message.clone(),
                    };
                }
            }
        }
        error
    }
}

/// The flags declared in conflict with `key`, in either direction.
fn conflicting(command: &clap::Command, key: &str) -> Vec<String> {
    let mut names = Vec::new();
    for arg in command.get_arguments() {
        let id = arg.get_id().as_str();
        if id == key {
            names.extend(command.get_arg_conflicts_with(arg).iter().map(|other| other.get_id().to_string()));
        } else if command.get_arg_conflicts_with(arg).iter().any(|other| other.get_id() == key) {
            names.push(id.to_string());
        }
    }
    names
}

impl ConfigFile {
    /// [`ConfigFile::attribute`] with the set of flag ids given on the command line.
    pub fn attribute_with(
        &self,
        given: &std::collections::BTreeSet<String>,
        error: ConfigError,
    ) -> ConfigError {
        self.attribute(error, |key| given.contains(key))
    }
}

/// A scalar TOML value as command-line text (strings without quotes).
fn scalar_text(value: &toml::Value) -> String {
    match value {
        toml::Value::String(text) => text.clone(),
        other => other.to_string(),
    }
}

fn check_value(path: &Path, key: &str, kind: Kind, value: &toml::Value) -> Result<(), ConfigError> {
    use toml::Value;
    let ok = match (kind, value) {
        (Kind::Text | Kind::Path | Kind::PathOrName, Value::String(text)) => !text.is_empty(),
        (Kind::Globs, Value::String(text)) => !text.is_empty(),
        (Kind::Globs, Value::Array(items)) => {
            !items.is_empty() && items.iter().all(|item| item.as_str().is_some_and(|text| !text.is_empty()))
        }
        (Kind::Choice, Value::String(text)) => possible_values(key).iter().any(|name| name == text),
        (Kind::Number, Value::Float(number)) => number.is_finite(),
        (Kind::Number, Value::Integer(_)) => true,
        (Kind::Whole, Value::Integer(number)) => *number >= 0,
        (Kind::Switch, Value::Boolean(_)) => true,
        (Kind::Sweep, Value::String(text)) => !text.is_empty(),
        (Kind::Sweep, Value::Array(items)) => {
            !items.is_empty() && items.iter().all(|item| matches!(item, Value::Integer(_) | Value::Float(_)))
        }
        (Kind::Contrast, Value::String(text)) => !text.is_empty(),
        (Kind::Names, Value::String(text)) => !text.is_empty(),
        (Kind::Names, Value::Array(items)) => {
            !items.is_empty() && items.iter().all(|item| item.as_str().is_some_and(|text| !text.is_empty()))
        }
        (Kind::Contrast, Value::Array(items)) => {
            items.len() == 2 && items.iter().all(|item| item.as_str().is_some_and(|text| !text.is_empty()))
        }
        _ => false,
    };
    if ok {
        Ok(())
    } else {
        Err(ConfigError::FileValue {
            path: path.to_path_buf(),
            key: key.to_string(),
            found: value.to_string(),
            allowed: allowed_text(key, kind),
        })
    }
}

/// Wraps `text` into `# `-prefixed comment lines of at most `width` characters.
fn comment_lines(text: &str, width: usize) -> String {
    let mut out = String::new();
    for paragraph in text.lines() {
        let mut line = String::from("#");
        for word in paragraph.split_whitespace() {
            if line.len() + 1 + word.len() > width && line.len() > 1 {
                out.push_str(&line);
                out.push('\n');
                line = String::from("#");
            }
            line.push(' ');
            line.push_str(word);
        }
        out.push_str(&line);
        out.push('\n');
    }
    out
}

/// A default value of clap as a TOML value of the key's kind.
fn default_toml(kind: Kind, default: &str) -> String {
    match kind {
        Kind::Number => toml::Value::Float(default.parse().unwrap_or(f64::NAN)).to_string(),
        Kind::Whole => default.to_string(),
        Kind::Switch => "false".into(),
        _ => toml::Value::String(default.to_string()).to_string(),
    }
}

/// The commented default configuration file printed by `strata defaults`: every key of
/// `strata run`, grouped by stage as in `--help`, with its help text and default; the keys a
/// run needs carry example values to edit, optional keys without default are commented out.
pub fn defaults_text() -> String {
    let command = run_command();
    let mut text = String::from(
        "# strata run configuration (TOML). Use it with: strata run THIS_FILE [flags]\n\
         # Keys are the long flags of `strata run` in snake_case; a flag given on the command line\n\
         # takes the place of the key. Relative paths are read from this file's folder.\n\
         # Printed by `strata defaults`: every value below is the default, except the examples\n\
         # marked \"required\", which you must edit.\n",
    );
    let mut heading: Option<String> = None;
    for (key, kind) in KEYS {
        let arg = command
            .get_arguments()
            .find(|arg| arg.get_id().as_str() == *key)
            .expect("every key is a flag of strata run");
        let this_heading = arg.get_help_heading().unwrap_or("Options").to_string();
        if heading.as_deref() != Some(this_heading.as_str()) {
            text.push_str(&format!("\n# ---- {this_heading} ----\n"));
            heading = Some(this_heading);
        }
        text.push('\n');
        let mut help =
            arg.get_long_help().or(arg.get_help()).map(|help| help.to_string()).unwrap_or_default();
        // clap drops the final full stop of one-paragraph help; the comment keeps it.
        if !help.trim_end().ends_with('.') {
            help = help.trim_end().to_string() + ".";
        }
        text.push_str(&comment_lines(&help, 95));
        if let Some(values) = (*kind == Kind::Choice).then(|| possible_values(key)) {
            text.push_str(&format!("# One of: {}.\n", values.join(", ")));
        }
        let defaults = arg.get_default_values();
        let example = EXAMPLES.iter().find(|(name, _)| name == key).map(|(_, example)| *example);
        if let Some(default) = defaults.first() {
            text.push_str(&format!("{key} = {}\n", default_toml(*kind, &default.to_string_lossy())));
        } else if *kind == Kind::Switch {
            text.push_str(&format!("{key} = false\n"));
        } else if let Some(example) = example {
            if REQUIRED.contains(key) {
                text.push_str(&format!("{key} = {example}   # required: edit\n"));
            } else {
                text.push_str(&format!("# {key} = {example}\n"));
            }
        } else if *kind == Kind::Whole {
            text.push_str(&format!("{key} = 0\n"));
        }
    }
    text
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keys_mirror_every_flag_of_run() {
        let command = run_command();
        let flags: Vec<String> = command
            .get_arguments()
            .map(|arg| arg.get_id().to_string())
            .filter(|id| {
                id != "config" && id != "help" && id != "version" && id != "quiet" && id != "verbose"
            })
            .collect();
        let keys: Vec<String> = KEYS.iter().map(|(key, _)| key.to_string()).collect();
        assert_eq!(flags, keys, "every flag of strata run is a key of the file, in --help order");
        for key in keys {
            assert_eq!(
                command.get_arguments().find(|arg| arg.get_id() == key.as_str()).unwrap().get_long(),
                Some(key.replace('_', "-").as_str())
            );
        }
    }

    #[test]
    fn unknown_keys_list_the_known_ones() {
        let error = ConfigFile::parse(Path::new("run.toml"), "metod = \"leiden\"\n").unwrap_err().to_string();
        assert_eq!(error, format!("run.toml: unknown key 'metod'; known keys: {}", known_keys()));
        let error =
            ConfigFile::parse(Path::new("run.toml"), "min-community-size = 3\n").unwrap_err().to_string();
        assert!(
            error.starts_with(
                "run.toml: unknown key 'min-community-size' (keys are written in snake_case: did you mean \
                 'min_community_size'?); known keys: inputs, similarity,"
            ),
            "{error}"
        );
    }

    #[test]
    fn wrong_types_give_key_value_and_allowed_values() {
        let cases = [
            (
                "method = \"walktrap\"",
                "run.toml: key 'method': found \"walktrap\"; allowed: one of infomap, leiden, leiden-cpm, louvain",
            ),
            ("trials = \"20\"", "run.toml: key 'trials': found \"20\"; allowed: a whole number, 0 or more"),
            ("trials = -3", "run.toml: key 'trials': found -3; allowed: a whole number, 0 or more"),
            ("force = 1", "run.toml: key 'force': found 1; allowed: true or false"),
            ("alpha = \"0.05\"", "run.toml: key 'alpha': found \"0.05\"; allowed: a number"),
            (
                "graph = \"mutual_knn\"",
                "run.toml: key 'graph': found \"mutual_knn\"; allowed: one of density, knn, mutual-knn, absolute",
            ),
            (
                "contrast = [\"insomnia\"]",
                "run.toml: key 'contrast': found [\"insomnia\"]; allowed: two levels of group_column, [\"A\", \"B\"] or \"A,B\"",
            ),
            (
                "densities = [0.1, \"x\"]",
                "run.toml: key 'densities': found [0.1, \"x\"]; allowed: a range \"START:STOP:STEP\" or a list of numbers",
            ),
            (
                "inputs = 3",
                "run.toml: key 'inputs': found 3; allowed: a glob pattern or a list of them, as strings",
            ),
            (
                "[graph]\nrule = \"knn\"",
                "run.toml: key 'graph': found { rule = \"knn\" }; allowed: one of density, knn, mutual-knn, absolute",
            ),
            (
                "inputs = \"a\"\nsimilarity = \"s.npy\"",
                "run.toml: key 'similarity': found \"s.npy\"; allowed: either inputs or similarity, not both; remove one of the two keys",
            ),
        ];
        for (text, expected) in cases {
            let error = ConfigFile::parse(Path::new("run.toml"), text).unwrap_err().to_string();
            assert_eq!(error, expected, "for the file text {text:?}");
        }
        let error = ConfigFile::parse(Path::new("run.toml"), "alpha = \n").unwrap_err().to_string();
        assert!(error.starts_with("run.toml: not valid TOML: "), "{error}");
        assert!(error.ends_with("(line 1)"), "{error}");
    }

    #[test]
    fn relative_paths_are_read_from_the_file_folder() {
        let file = ConfigFile::parse(
            Path::new("study/run.toml"),
            "participants = \"participants.tsv\"\nmask = \"/abs/mask.nii\"\ninputs = [\"a/*.npy\", \"b/*.npy\"]\nforce = true\n",
        )
        .unwrap();
        let flags = file.flags(|_| false);
        assert_eq!(
            flags,
            vec![
                "--force",
                "--inputs=study/a/*.npy",
                "--inputs=study/b/*.npy",
                "--mask=/abs/mask.nii",
                "--participants=study/participants.tsv",
            ]
        );
        // A flag on the command line takes the key's place, and --similarity the place of inputs.
        let flags = file.flags(|key| key == "similarity" || key == "mask");
        assert_eq!(flags, vec!["--force", "--participants=study/participants.tsv"]);
    }

    #[test]
    fn built_in_names_are_kept_unless_a_file_of_that_name_is_beside_the_file() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("run.toml");
        let text = "atlas = \"dosenbach160\"\nmask = \"mni152-2mm\"\nparticipants = \"dosenbach160\"\n";
        let file = ConfigFile::parse(&path, text).unwrap();
        let folder = dir.path().display();
        assert_eq!(
            file.flags(|_| false),
            vec![
                "--atlas=dosenbach160".to_string(),
                "--mask=mni152-2mm".to_string(),
                // A plain path key is always read from the file's folder.
                format!("--participants={folder}/dosenbach160"),
            ]
        );
        // A file named like a built-in, beside the configuration file, wins.
        std::fs::write(dir.path().join("dosenbach160"), "index\tname\n").unwrap();
        assert_eq!(file.flags(|_| false)[0], format!("--atlas={folder}/dosenbach160"));
    }
}
