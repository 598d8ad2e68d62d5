//! Reading scenario files: syntax errors with line:column, meaning errors with a field path,
//! the nearest known name for a misspelt field, and a plain message for a newer format.

use std::fmt;
use std::path::Path;

use serde::Deserialize;

use super::{FORMAT, Scenario, validate};

/// Where in a file a problem is.
#[derive(Debug, Clone, PartialEq)]
pub enum Location {
    /// 1-based line and column.
    Text { line: usize, column: usize },
    /// A field path such as `protocol[2].species`.
    Field(String),
}

/// One thing wrong with a file's meaning.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    pub path: String,
    pub message: String,
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}: {}", self.path, self.message)
    }
}

#[derive(Debug, thiserror::Error)]
pub enum ScenarioError {
    #[error("{file}: cannot read the file: {source}")]
    Io {
        file: String,
        #[source]
        source: std::io::Error,
    },
    #[error("{file}:{line}:{column}: {message}")]
    Syntax { file: String, line: usize, column: usize, message: String },
    #[error(
        "{file}: this scenario is written in format {found}, newer than this version of permeant reads (format {FORMAT}); open it with a newer permeant"
    )]
    NewerFormat { file: String, found: u32 },
    #[error("{file}: {}", problems.iter().map(|p| p.to_string()).collect::<Vec<_>>().join("\n{file}: "))]
    Invalid { file: String, problems: Vec<Problem> },
}

impl ScenarioError {
    /// The place of the first problem, for the window to point at.
    pub fn location(&self) -> Option<Location> {
        match self {
            ScenarioError::Syntax { line, column, .. } => Some(Location::Text { line: *line, column: *column }),
            ScenarioError::Invalid { problems, .. } => problems.first().map(|p| Location::Field(p.path.clone())),
            ScenarioError::NewerFormat { .. } => Some(Location::Field("format".into())),
            ScenarioError::Io { .. } => None,
        }
    }
}

/// Reads and validates a scenario file. The file is never written.
pub fn read_file(path: &Path) -> Result<Scenario, ScenarioError> {
    let file = path.display().to_string();
    let bytes = std::fs::read(path).map_err(|source| ScenarioError::Io { file: file.clone(), source })?;
    let text = String::from_utf8(bytes).map_err(|e| ScenarioError::Syntax {
        file: file.clone(),
        line: 1,
        column: 1,
        message: format!("the file is not UTF-8 text (invalid byte at offset {})", e.utf8_error().valid_up_to()),
    })?;
    from_str(&text, &file)
}

/// Only the format number, read before anything else so that a newer file gets the right message.
#[derive(Deserialize)]
struct FormatProbe {
    format: Option<u32>,
}

/// Parses and validates scenario text; `file` names it in messages.
pub fn from_str(text: &str, file: &str) -> Result<Scenario, ScenarioError> {
    // A newer format may have fields this version does not know; say so rather than complain
    // about the first unknown field.
    if let Ok(FormatProbe { format: Some(found) }) = ron::from_str::<FormatProbe>(text) {
        if found > FORMAT {
            return Err(ScenarioError::NewerFormat { file: file.into(), found });
        }
    }
    let scenario: Scenario = ron::from_str(text).map_err(|e| syntax_error(file, &e))?;
    let problems = validate(&scenario);
    if problems.is_empty() {
        Ok(scenario)
    } else {
        Err(ScenarioError::Invalid { file: file.into(), problems })
    }
}

/// How the file's own words name the Rust type a serde error mentions.
fn place_name(outer: Option<&str>) -> &'static str {
    match outer {
        Some("Scenario") | None => "the scenario",
        Some("Cell") => "cell",
        Some("Species") => "a species",
        Some("Pump") => "pump",
        Some("Channel") => "a channel",
        Some("Gate") => "a gate",
        Some("RunSettings") => "run",
        Some("PermeabilityScale") => "a PermeabilityScale event",
        Some("BathChange") => "a BathChange event",
        Some("Agent") => "an Agent event",
        Some("Inject") => "an Inject event",
        Some("InjectTrain") => "an InjectTrain event",
        Some("Boltzmann") => "Boltzmann kinetics",
        Some("Event") => "the protocol",
        Some("Kinetics") => "gate kinetics",
        Some("Start") => "run.start",
        Some(_) => "the scenario",
    }
}

fn nearest<'a>(found: &str, known: &[&'a str]) -> Option<&'a str> {
    known
        .iter()
        .map(|k| (strsim::damerau_levenshtein(&found.to_lowercase(), &k.to_lowercase()), *k))
        .filter(|(d, k)| *d <= (k.len() / 2).max(2))
        .min_by_key(|(d, _)| *d)
        .map(|(_, k)| k)
}

fn syntax_error(file: &str, e: &ron::error::SpannedError) -> ScenarioError {
    use ron::Error as E;
    let message = match &e.code {
        E::NoSuchStructField { expected, found, outer } => {
            let mut m = format!("unknown field `{found}` in {}", place_name(outer.as_deref()));
            match nearest(found, expected) {
                Some(n) => m.push_str(&format!("; did you mean `{n}`?")),
                None => m.push_str(&format!("; the known fields are {}", expected.join(", "))),
            }
            m
        }
        E::MissingStructField { field, outer } => {
            format!("the required field `{field}` is missing from {}", place_name(outer.as_deref()))
        }
        E::NoSuchEnumVariant { expected, found, outer } => {
            let mut m = format!("`{found}` is not a known choice in {}", place_name(outer.as_deref()));
            match nearest(found, expected) {
                Some(n) => m.push_str(&format!("; did you mean `{n}`?")),
                None => m.push_str(&format!("; expected one of {}", expected.join(", "))),
            }
            m
        }
        E::DuplicateStructField { field, outer } => {
            format!("the field `{field}` is given twice in {}", place_name(outer.as_deref()))
        }
        other => format!("{other}"),
    };
    ScenarioError::Syntax { file: file.into(), line: e.span.start.line, column: e.span.start.col, message }
}
