//! Reading scenario files: syntax errors with line:column, meaning errors with a field path,
//! the nearest known name for a misspelt field, and a plain message for a newer format.
//!
//! RON and serde describe errors in Rust's words ("Expected float", "struct `Pump`"); users
//! wrote the file, not the program, so every message here is put back into the file's words:
//! the field whose value is wrong, what that field takes, and what the file has instead.

use std::fmt;
use std::io::Read;
use std::path::Path;

use serde::Deserialize;

use super::{FORMAT, Scenario, Valid, validate};

/// Largest file read as a scenario. Real scenarios are a few kilobytes; the cap keeps a wrong
/// path (a device, a multi-gigabyte log) from exhausting memory before the parser can refuse it.
const MAX_FILE_BYTES: u64 = 16 * 1024 * 1024;

/// Where in a file a problem is.
#[derive(Debug, Clone, PartialEq)]
pub enum Location {
    /// 1-based line and column (columns count characters, not bytes).
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
    /// The reason is part of the message (and not a separate `source`), so that both a plain
    /// `to_string` and an error chain print it exactly once.
    #[error("{file}: cannot read the file: {}", io_reason(reason))]
    Io { file: String, reason: std::io::Error },
    #[error("{file}:{line}:{column}: {message}")]
    Syntax {
        file: String,
        line: usize,
        column: usize,
        message: String,
    },
    #[error(
        "{file}: format: this scenario is written in format {found}, newer than this program reads (format {FORMAT}); open it with a newer version of permeant"
    )]
    NewerFormat { file: String, found: u64 },
    #[error("{file}: {}", problems.iter().map(|p| p.to_string()).collect::<Vec<_>>().join(&format!("\n{file}: ")))]
    Invalid { file: String, problems: Vec<Problem> },
}

impl ScenarioError {
    /// The place of the first problem, for the window to point at.
    pub fn location(&self) -> Option<Location> {
        match self {
            ScenarioError::Syntax { line, column, .. } => Some(Location::Text {
                line: *line,
                column: *column,
            }),
            ScenarioError::Invalid { problems, .. } => {
                problems.first().map(|p| Location::Field(p.path.clone()))
            }
            ScenarioError::NewerFormat { .. } => Some(Location::Field("format".into())),
            ScenarioError::Io { .. } => None,
        }
    }
}

/// The common reasons a file cannot be read, in plain words.
fn io_reason(e: &std::io::Error) -> String {
    use std::io::ErrorKind as K;
    match e.kind() {
        K::NotFound => "there is no such file".into(),
        K::PermissionDenied => "permission denied".into(),
        K::IsADirectory => "it is a folder, not a file".into(),
        _ => e.to_string(),
    }
}

/// Reads and validates a scenario file. The file is only opened for reading.
pub fn read_file(path: &Path) -> Result<Valid, ScenarioError> {
    let file = path.display().to_string();
    let io = |reason| ScenarioError::Io {
        file: file.clone(),
        reason,
    };
    // A named pipe nobody writes to would block the open for ever. (A pipe the shell made,
    // `<(…)` as `/dev/fd/N`, has its writer and is read as usual.)
    #[cfg(unix)]
    if let Ok(m) = std::fs::metadata(path)
        && std::os::unix::fs::FileTypeExt::is_fifo(&m.file_type())
        && !(path.starts_with("/dev/") || path.starts_with("/proc/"))
    {
        return Err(io(std::io::Error::other(
            "it is a named pipe (FIFO), not a scenario file; save the scenario to a file and give that",
        )));
    }
    let mut bytes = Vec::new();
    std::fs::File::open(path)
        .and_then(|f| f.take(MAX_FILE_BYTES + 1).read_to_end(&mut bytes))
        .map_err(io)?;
    if bytes.len() as u64 > MAX_FILE_BYTES {
        return Err(ScenarioError::Syntax {
            file,
            line: 1,
            column: 1,
            message: format!(
                "the file is larger than {} MiB, far too large to be a scenario; is this the right file?",
                MAX_FILE_BYTES / (1024 * 1024)
            ),
        });
    }
    let text = match String::from_utf8(bytes) {
        Ok(t) => t,
        Err(e) => {
            let valid = &e.as_bytes()[..e.utf8_error().valid_up_to()];
            // The prefix up to the first bad byte is valid UTF-8 by definition.
            let prefix = std::str::from_utf8(valid).unwrap_or("");
            let (line, column) = line_column(prefix, prefix.len());
            return Err(ScenarioError::Syntax {
                file,
                line,
                column,
                message: "the file is not plain text (UTF-8); a scenario is a text file written in RON"
                    .into(),
            });
        }
    };
    from_str(&text, &file)
}

/// Only the format number, read before anything else so that a newer file gets the right
/// message rather than a complaint about the first field this version does not know.
/// Named like the real struct so that a file written `Scenario( … )` is read too.
#[derive(Deserialize)]
#[serde(rename = "Scenario")]
struct FormatProbe {
    #[serde(default)]
    format: u64,
}

/// Parses and validates scenario text; `file` names it in messages.
pub fn from_str(text: &str, file: &str) -> Result<Valid, ScenarioError> {
    // Some editors start a UTF-8 file with an invisible byte-order mark; it is not part of RON.
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    // Line ends of a lone carriage return (classic Mac OS, some exports) are line ends to the
    // user but not to RON, whose `//` comment would then run to the end of the file and turn
    // every message into "line 1, column 1262".
    let unified;
    let text = if text.replace("\r\n", "").contains('\r') {
        unified = text.replace("\r\n", "\n").replace('\r', "\n");
        unified.as_str()
    } else {
        text
    };
    if text.trim().is_empty() {
        return Err(ScenarioError::Syntax {
            file: file.into(),
            line: 1,
            column: 1,
            message: "the file is empty; a scenario is written `( format: 1, species: [ … ], run: ( … ) )`"
                .into(),
        });
    }
    if let Ok(FormatProbe { format: found }) = ron::from_str::<FormatProbe>(text)
        && found > u64::from(FORMAT)
    {
        return Err(ScenarioError::NewerFormat {
            file: file.into(),
            found,
        });
    }
    let scenario: Scenario = ron::from_str(text).map_err(|e| syntax_error(file, text, &e))?;
    let mut found = super::recipes::missing(&scenario);
    found.extend(super::recipes::given_twice(&scenario));
    if !found.is_empty() {
        return Err(ScenarioError::Invalid {
            file: file.into(),
            problems: found,
        });
    }
    validate(scenario).map_err(|e| ScenarioError::Invalid {
        file: file.into(),
        problems: e.0,
    })
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
        Some("Step") => "a Step command",
        Some("Ramp") => "a Ramp command",
        Some("RunMode") | Some("VoltageClamp") => "run.mode",
        Some("Family") => "run.family",
        Some("BathExchange") => "a BathExchange event",
        Some("Solution") => "a solution",
        Some("UserCompound") => "a compound",
        Some("CompoundIon") => "an ion of a compound",
        Some("Reference") => "reference",
        Some("Boltzmann") => "Boltzmann kinetics",
        Some("Event") => "the protocol",
        Some("Kinetics") => "gate kinetics",
        Some("Start") => "run.start",
        Some(_) => "the scenario",
    }
}

/// The known name closest to `found`, if any is close enough to be a plausible misspelling.
pub fn nearest_name<'a>(found: &str, known: &[&'a str]) -> Option<&'a str> {
    nearest(found, known)
}

/// The known name closest to `found` (see [`nearest_name`]).
pub(super) fn nearest<'a>(found: &str, known: &[&'a str]) -> Option<&'a str> {
    let found = found.to_lowercase();
    known
        .iter()
        .map(|k| (strsim::damerau_levenshtein(&found, &k.to_lowercase()), *k))
        .filter(|(d, k)| *d <= (k.chars().count() / 2).max(2))
        .min_by_key(|(d, _)| *d)
        .map(|(_, k)| k)
}

/// Fields whose values are counts (unsigned): a minus sign there is the likely mistake.
const COUNT_FIELDS: &[&str] = &[
    "format",
    "exported_per_cycle",
    "imported_per_cycle",
    "power",
    "count",
];

fn syntax_error(file: &str, text: &str, e: &ron::error::SpannedError) -> ScenarioError {
    use ron::Error as E;
    // RON's span runs from the start of the last token it took to where it stopped. When a
    // value of the wrong kind is met it stops at that value, so the end is the place to show;
    // for a bad name or number the start is. Blanks and comments are skipped to the value.
    let stopped_at_value = matches!(
        e.code,
        E::ExpectedFloat
            | E::ExpectedInteger
            | E::ExpectedBoolean
            | E::ExpectedString
            | E::ExpectedChar
            | E::ExpectedOption
            | E::ExpectedArray
            | E::ExpectedStructLike
            | E::ExpectedNamedStructLike(_)
            | E::ExpectedStructLikeEnd
            | E::ExpectedOptionEnd
            | E::ExpectedArrayEnd
            | E::ExpectedComma
            | E::ExpectedIdentifier
            | E::ExpectedMapColon
            | E::ExpectedUnit
            | E::TrailingCharacters
    );
    let position = if stopped_at_value {
        &e.span.end
    } else {
        &e.span.start
    };
    let reported = byte_offset(text, position.line, position.col);
    let at = match e.code {
        E::Eof => text.len(),
        E::UnclosedBlockComment => reported,
        // RON has already taken a minus sign when it finds the number too large.
        E::IntegerOutOfBounds if text[..reported].ends_with('-') => reported - 1,
        _ => skip_blank(text, reported),
    };
    let (line, column) = line_column(text, at);
    let key = last_key_before(text, at);
    let found = describe_found(text, at);
    let field = key.as_deref().map(|k| format!("`{k}`"));
    let needs = |what: &str| match &field {
        Some(f) => format!("{f} takes {what}, but the file has {found} here"),
        None => format!("expected {what}, but the file has {found} here"),
    };
    let message = match &e.code {
        E::NoSuchStructField {
            expected,
            found,
            outer,
        } => {
            let mut m = format!("unknown field `{found}` in {}", place_name(outer.as_deref()));
            match nearest(found, expected) {
                Some(n) => m.push_str(&format!("; did you mean `{n}`?")),
                None => m.push_str(&format!("; the known fields are {}", expected.join(", "))),
            }
            m
        }
        E::MissingStructField { field, outer } => {
            let mut m = format!(
                "the required field `{field}` is missing from {}",
                place_name(outer.as_deref())
            );
            if *field == "format" {
                m.push_str(&format!("; start the scenario with `format: {FORMAT},`"));
            }
            m
        }
        E::NoSuchEnumVariant {
            expected,
            found,
            outer,
        } => {
            let mut m = format!(
                "`{found}` is not a known choice in {}",
                place_name(outer.as_deref())
            );
            match nearest(found, expected) {
                Some(n) => m.push_str(&format!("; did you mean `{n}`?")),
                None => m.push_str(&format!("; expected one of {}", expected.join(", "))),
            }
            m
        }
        E::DuplicateStructField { field, outer } => {
            format!(
                "the field `{field}` is given twice in {}",
                place_name(outer.as_deref())
            )
        }
        E::ExpectedFloat => needs("a number"),
        E::ExpectedInteger | E::InvalidIntegerDigit { .. } => needs("a whole number"),
        E::IntegerOutOfBounds => {
            let negative = text[at..].starts_with('-');
            if negative && key.as_deref().is_some_and(|k| COUNT_FIELDS.contains(&k)) {
                needs("a whole number of 0 or more")
            } else {
                needs("a whole number of ordinary size")
            }
        }
        E::ExpectedBoolean => needs("`true` or `false`"),
        E::ExpectedString | E::ExpectedStringEnd | E::ExpectedChar => needs("text in double quotes"),
        E::ExpectedOption => needs("`Some( … )` or `None`"),
        E::ExpectedArray => needs("a list in square brackets `[ … ]`"),
        E::ExpectedStructLike | E::ExpectedNamedStructLike(_) => needs("a group in round brackets `( … )`"),
        E::ExpectedDifferentStructName { found: name, .. } => {
            let within = field.as_ref().map(|f| format!(" in {f}")).unwrap_or_default();
            format!(
                "expected `(`{within}, but the file has the name `{name}` here; a group is written `( … )` without a name"
            )
        }
        E::ExpectedStructLikeEnd | E::ExpectedOptionEnd => {
            format!("expected a closing `)`, but the file has {found} here")
        }
        E::ExpectedArrayEnd => format!("expected a comma or a closing `]`, but the file has {found} here"),
        E::ExpectedComma => match whole_number_with_fraction(text, at) {
            Some(number) => match &field {
                Some(f) => format!("{f} takes a whole number, but the file has `{number}`"),
                None => format!("expected a whole number, but the file has `{number}`"),
            },
            None => {
                let after = field
                    .map(|f| format!(" after the value of {f}"))
                    .unwrap_or_default();
                format!("expected a comma or a closing bracket{after}, but the file has {found} here")
            }
        },
        E::ExpectedIdentifier => {
            needs("a name (a field name such as `species`, or a choice such as `Inject`)")
        }
        E::ExpectedMapColon => {
            format!("expected a colon `:` after the field name, but the file has {found} here")
        }
        E::ExpectedMap | E::ExpectedMapEnd => needs("a group in round brackets `( … )`"),
        E::ExpectedUnit => needs("`()`"),
        E::Eof => "the file ends too early; a value or a closing bracket is missing".into(),
        E::TrailingCharacters => {
            format!(
                "the scenario ends with the `)` before this, but the file goes on with {found}; only comments may follow"
            )
        }
        E::ExceededRecursionLimit => "brackets are nested too deeply here for a scenario".into(),
        E::UnclosedBlockComment => "a comment opened with `/*` is never closed with `*/`".into(),
        E::InvalidEscape(_) => {
            "quoted text has a backslash escape that RON does not know; write `\\\\` for a backslash".into()
        }
        E::UnexpectedChar(c) => format!("unexpected character {c:?}"),
        E::Utf8Error(_) => "the file is not plain text (UTF-8)".into(),
        E::NoSuchExtension(name) => format!("`#![enable({name})]` names no RON extension this program knows"),
        E::ExpectedDifferentLength { found: n, .. } => {
            let what = field.unwrap_or_else(|| "this value".into());
            format!("{what} has the wrong number of values ({n})")
        }
        E::InvalidValueForType { expected, found: was } => {
            needs_plain(field.as_deref(), &plain_words(expected), &plain_words(was))
        }
        E::Message(m) => plain_words(m),
        other => plain_words(&other.to_string()),
    };
    ScenarioError::Syntax {
        file: file.into(),
        line,
        column,
        message,
    }
}

fn needs_plain(field: Option<&str>, expected: &str, found: &str) -> String {
    match field {
        Some(f) => format!("{f} takes {expected}, but the file has {found}"),
        None => format!("expected {expected}, but the file has {found}"),
    }
}

/// Replaces the Rust type names serde puts into its messages with the file's terms.
fn plain_words(m: &str) -> String {
    const WORDS: &[(&str, &str)] = &[
        ("u32", "a whole number of 0 or more"),
        ("u64", "a whole number of 0 or more"),
        ("i32", "a whole number"),
        ("i64", "a whole number"),
        ("f64", "a number"),
        ("f32", "a number"),
        ("struct Scenario", "a scenario"),
        ("struct RunSettings", "run settings"),
        ("enum Event", "a protocol event"),
        ("enum Kinetics", "gate kinetics"),
        ("enum Start", "`Rest` or `Voltage( … )`"),
    ];
    let mut out = m.to_string();
    for (rust, file) in WORDS {
        out = out.replace(rust, file);
    }
    out.replace("struct ", "").replace("enum ", "")
}

/// Byte offset of a 1-based line and character column, clamped to the text.
fn byte_offset(text: &str, line: usize, column: usize) -> usize {
    let mut offset = 0;
    for _ in 1..line {
        match text[offset..].find('\n') {
            Some(i) => offset += i + 1,
            None => return text.len(),
        }
    }
    let rest = &text[offset..];
    let line_end = rest.find('\n').unwrap_or(rest.len());
    rest[..line_end]
        .char_indices()
        .nth(column.saturating_sub(1))
        .map_or(offset + line_end, |(i, _)| offset + i)
}

/// 1-based line and character column of a byte offset.
fn line_column(text: &str, at: usize) -> (usize, usize) {
    let before = text.get(..at).unwrap_or(text);
    let line = 1 + before.matches('\n').count();
    let line_start = before.rfind('\n').map_or(0, |i| i + 1);
    (line, 1 + before[line_start..].chars().count())
}

/// The offset after whitespace and complete comments starting at `at`.
fn skip_blank(text: &str, mut at: usize) -> usize {
    loop {
        let rest = &text[at..];
        let trimmed = rest.trim_start();
        at += rest.len() - trimmed.len();
        if trimmed.starts_with("//") {
            at += trimmed.find('\n').unwrap_or(trimmed.len());
        } else if trimmed.starts_with("/*") {
            match trimmed.find("*/") {
                Some(i) => at += i + 2,
                None => return at,
            }
        } else {
            return at;
        }
    }
}

/// A short quotation of what the file has at `at`, for "but the file has … here".
fn describe_found(text: &str, at: usize) -> String {
    let rest = &text[at..];
    let Some(first) = rest.chars().next() else {
        return "the end of the file".into();
    };
    let token: String = if first == '"' {
        let end = rest[1..].find('"').map_or(rest.len(), |i| i + 2);
        rest[..end].chars().take(40).collect()
    } else if first.is_alphanumeric() || "_+-.".contains(first) {
        rest.chars()
            .take_while(|c| c.is_alphanumeric() || "_+-.".contains(*c))
            .take(40)
            .collect()
    } else {
        first.to_string()
    };
    if token.chars().all(|c| !c.is_control()) {
        match first {
            '"' => format!("the text {token}"),
            '(' | '[' | '{' => format!("`{token}` (a bracket)"),
            _ => format!("`{token}`"),
        }
    } else {
        format!("the character {first:?}")
    }
}

/// `1.5` where a whole number was wanted: RON stops at the `.` and asks for a comma.
fn whole_number_with_fraction(text: &str, at: usize) -> Option<String> {
    let rest = &text[at..];
    if !(rest.starts_with('.') || rest.starts_with('e') || rest.starts_with('E')) {
        return None;
    }
    let before = &text[..at];
    let start = before
        .trim_end_matches(|c: char| c.is_ascii_digit() || c == '_')
        .len();
    if start == at {
        return None;
    }
    let start = if before[..start].ends_with(['-', '+']) {
        start - 1
    } else {
        start
    };
    let end = at
        + rest
            .find(|c: char| !(c.is_ascii_alphanumeric() || "._+-".contains(c)))
            .unwrap_or(rest.len());
    Some(text[start..end].to_string())
}

/// The last `name:` written before `at`, skipping strings and comments: the field whose value
/// the parser was reading when it stopped.
fn last_key_before(text: &str, at: usize) -> Option<String> {
    let b = text.as_bytes();
    let end = at.min(b.len());
    let mut i = 0;
    let mut key = None;
    while i < end {
        match b[i] {
            b'"' => i = skip_quoted(b, i, b'"'),
            b'\'' => i = skip_quoted(b, i, b'\''),
            b'/' if b.get(i + 1) == Some(&b'/') => {
                i = b[i..].iter().position(|&c| c == b'\n').map_or(b.len(), |n| i + n);
            }
            b'/' if b.get(i + 1) == Some(&b'*') => {
                i = text[i + 2..].find("*/").map_or(b.len(), |n| i + 2 + n + 2);
            }
            c if c.is_ascii_alphabetic() || c == b'_' => {
                let start = i;
                while i < b.len() && (b[i].is_ascii_alphanumeric() || b[i] == b'_') {
                    i += 1;
                }
                let word = &text[start..i];
                if (word == "r" || word == "br") && matches!(b.get(i), Some(b'"' | b'#')) {
                    i = skip_raw(text, i);
                    continue;
                }
                let mut j = i;
                while j < end && b[j].is_ascii_whitespace() {
                    j += 1;
                }
                if j < end && b[j] == b':' && b.get(j + 1) != Some(&b':') {
                    key = Some(word.to_string());
                }
            }
            _ => i += 1,
        }
    }
    key
}

/// Index after a quoted string or character starting at `i`.
fn skip_quoted(b: &[u8], i: usize, quote: u8) -> usize {
    let mut j = i + 1;
    while j < b.len() {
        match b[j] {
            b'\\' => j += 2,
            c if c == quote => return j + 1,
            _ => j += 1,
        }
    }
    b.len()
}

/// Index after a raw string `r#"…"#` whose hashes and quote start at `i`.
fn skip_raw(text: &str, i: usize) -> usize {
    let hashes = text[i..].bytes().take_while(|&c| c == b'#').count();
    let open = i + hashes;
    if text.as_bytes().get(open) != Some(&b'"') {
        return open;
    }
    let close = format!("\"{}", "#".repeat(hashes));
    text[open + 1..]
        .find(&close)
        .map_or(text.len(), |n| open + 1 + n + close.len())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn offsets_and_columns_count_characters() {
        let text = "(\n  title: \"αβ\", x: 1\n)";
        let at = byte_offset(text, 2, 16);
        assert_eq!(&text[at..at + 1], "x");
        assert_eq!(line_column(text, at), (2, 16));
        assert_eq!(byte_offset(text, 9, 1), text.len());
        assert_eq!(byte_offset(text, 2, 99), text.find("\n)").unwrap_or(0));
    }

    #[test]
    fn last_key_skips_strings_and_comments() {
        let text = "(a: \"b: c\", /* d: */ e: r#\"f: \"# // g:\n";
        assert_eq!(last_key_before(text, text.len()).as_deref(), Some("e"));
        assert_eq!(last_key_before("Some(", 5), None);
    }

    #[test]
    fn fraction_in_a_whole_number_is_quoted_whole() {
        let text = "(charge: -1.5, x)";
        let at = text.find('.').unwrap_or(0);
        assert_eq!(whole_number_with_fraction(text, at).as_deref(), Some("-1.5"));
        assert_eq!(whole_number_with_fraction("(a: b.c)", 5), None);
    }
}
