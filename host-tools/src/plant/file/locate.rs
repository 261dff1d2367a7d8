//! Byte spans to 1-based lines and columns, and TOML parse errors to [`PlantError`]s.

use std::ops::Range;

use crate::plant::error::PlantError;

/// The text being read and its name, to place errors.
pub struct Source<'a> {
    pub text: &'a str,
    pub file: &'a str,
}

impl<'a> Source<'a> {
    /// 1-based line and column (in characters) of byte `offset`.
    pub fn line_column(&self, offset: usize) -> (usize, usize) {
        let offset = floor_char_boundary(self.text, offset.min(self.text.len()));
        let before = &self.text[..offset];
        let line = before.matches('\n').count() + 1;
        let line_start = before.rfind('\n').map_or(0, |i| i + 1);
        let column = before[line_start..].chars().count() + 1;
        (line, column)
    }

    /// An error at the start of `span`.
    pub fn error(
        &self,
        span: Range<usize>,
        field: impl Into<String>,
        message: impl Into<String>,
        hint: impl Into<String>,
    ) -> PlantError {
        let (line, column) = self.line_column(span.start);
        PlantError {
            file: self.file.to_string(),
            line,
            column,
            field: field.into(),
            message: message.into(),
            hint: hint.into(),
        }
    }

    /// A TOML syntax or shape error, placed by toml's own span. The field is the exact path
    /// the deserializer was at (for a misspelt key, ending in that key); only a syntax
    /// error, where no table was read, falls back to the table header and key of its line.
    pub fn toml_error(&self, err: serde_path_to_error::Error<toml::de::Error>) -> PlantError {
        let field = deserializer_path(err.path());
        let err = err.into_inner();
        let span = err.span().unwrap_or(0..0);
        // toml sometimes puts a second line of detail in its message; keep one line.
        let message: Vec<&str> = err.message().lines().map(str::trim).collect();
        let message = message.join("; ");
        // The path ends at a misspelt key already (serde reads the key before refusing it);
        // a key refused at the top level has no path yet.
        let field = match (field, unknown_key(&message)) {
            (Some(f), _) => f,
            (None, Some(k)) => k.to_string(),
            (None, None) => context_path(self.text, span.start),
        };
        let hint = toml_hint(&message);
        self.error(span, field, message, hint)
    }
}

/// The deserializer's path as a dotted field name (`node.plc`, `segment`), without list
/// indices and without the span wrappers' private keys; `None` at the document's top.
fn deserializer_path(path: &serde_path_to_error::Path) -> Option<String> {
    use serde_path_to_error::Segment;
    let parts: Vec<&str> = path
        .iter()
        .filter_map(|s| match s {
            Segment::Map { key } if !key.starts_with("$__") => Some(key.as_str()),
            Segment::Enum { variant } => Some(variant.as_str()),
            _ => None,
        })
        .collect();
    (!parts.is_empty()).then(|| parts.join("."))
}

/// The key named by serde's "unknown field `x`" message.
fn unknown_key(message: &str) -> Option<&str> {
    message.strip_prefix("unknown field `")?.split('`').next()
}

fn floor_char_boundary(text: &str, mut i: usize) -> usize {
    while i > 0 && !text.is_char_boundary(i) {
        i -= 1;
    }
    i
}

/// The field of a syntax error at a byte offset (no table was deserialized yet): the last
/// table header before it, plus the key of the line it sits on (`plant.name`).
fn context_path(text: &str, offset: usize) -> String {
    let offset = floor_char_boundary(text, offset.min(text.len()));
    let line_start = text[..offset].rfind('\n').map_or(0, |i| i + 1);
    let line_end = text[offset..].find('\n').map_or(text.len(), |i| offset + i);
    let line = text[line_start..line_end].trim();
    let mut header = String::new();
    for l in text[..line_start].lines().chain(std::iter::once(line)) {
        let l = l.trim();
        if l.starts_with('[') {
            let name = l.trim_start_matches('[');
            if let Some(end) = name.find(']') {
                header = name[..end].trim().to_string();
            }
        }
    }
    let key = if line.starts_with('[') || line.starts_with('#') {
        None
    } else {
        line.split_once('=').map(|(k, _)| k.trim()).filter(|k| !k.is_empty())
    };
    match (header.is_empty(), key) {
        (_, Some(k)) if header.is_empty() => k.to_string(),
        (false, Some(k)) => format!("{header}.{k}"),
        _ => header,
    }
}

/// A one-line fix hint for the common TOML mistakes.
fn toml_hint(message: &str) -> String {
    let hint = if message.contains("unknown field") {
        "check the spelling; docs/plant-files.md lists every field of each table"
    } else if message.contains("missing field") {
        "add the missing field to this table"
    } else if message.contains("duplicate key") {
        "each table and key may appear only once; rename or merge the copies"
    } else if message.contains("invalid type") {
        "check the value's type: quantities are strings like \"23 m\", names are strings"
    } else {
        "fix the TOML syntax at this place (strings need closing quotes, tables [name])"
    };
    hint.to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn line_and_column_are_one_based_and_count_characters() {
        let src = Source { text: "ab\ncµd\nx", file: "f" };
        assert_eq!(src.line_column(0), (1, 1));
        assert_eq!(src.line_column(3), (2, 1));
        // 'µ' is two bytes; 'd' starts at byte 6 and is the third character of line 2.
        assert_eq!(src.line_column(6), (2, 3));
        assert_eq!(src.line_column(8), (3, 1));
        assert_eq!(src.line_column(999), (3, 2));
    }

    #[test]
    fn context_path_uses_header_and_key() {
        let text = "[plant]\nname = \"x\"\n[node.plc]\nlaod = \"open\"\n";
        let at = text.find("laod").unwrap();
        assert_eq!(context_path(text, at), "node.plc.laod");
        assert_eq!(context_path(text, text.find("name").unwrap()), "plant.name");
        assert_eq!(context_path(text, text.find("[node").unwrap()), "node.plc");
    }
}
