//! The one error type of plant-file reading: what is wrong, where, and how to fix it.
//!
//! Every problem with a plant file, from a TOML syntax slip to a cable that is faster than
//! light, becomes a [`PlantError`] that names the file, the 1-based line and column, the
//! field path (for example `segment[plc-tap1].length`), a one-line message and a one-line
//! hint. The command line prints it and exits with [`PlantError::exit_code`].

/// A plant file that cannot be read, with its location and a fix hint.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
#[error("{file}{}: {}{message}{}", place(*.line, *.column), field_prefix(.field), hint_line(.hint))]
pub struct PlantError {
    /// The file as named to the reader (plant file, or a samples file it refers to).
    pub file: String,
    /// 1-based line; 0 when the problem has no place in the file (it cannot be opened).
    pub line: usize,
    /// 1-based column in characters; 0 together with `line`.
    pub column: usize,
    /// Path of the field, such as `cable.trunk.impedance` or `probe[at plc].node`; empty
    /// when the problem is not tied to one field.
    pub field: String,
    /// What is wrong, one line.
    pub message: String,
    /// How to fix it, one line.
    pub hint: String,
}

impl PlantError {
    /// The process exit code for a bad plant file (2: the user's input is wrong).
    pub fn exit_code(&self) -> i32 {
        2
    }
}

/// ":line:column" when the place is known.
fn place(line: usize, column: usize) -> String {
    if line > 0 {
        format!(":{line}:{column}")
    } else {
        String::new()
    }
}

/// "field: " when a field is named.
fn field_prefix(field: &str) -> String {
    if field.is_empty() {
        String::new()
    } else {
        format!("{field}: ")
    }
}

/// The hint on its own indented line, when there is one.
fn hint_line(hint: &str) -> String {
    if hint.is_empty() {
        String::new()
    } else {
        format!("\n  hint: {hint}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn display_puts_place_field_message_and_hint_on_two_lines() {
        let e = PlantError {
            file: "plant.toml".into(),
            line: 12,
            column: 10,
            field: "segment[plc-tap1].length".into(),
            message: "length must be positive, got \"-3 m\"".into(),
            hint: "write the cable run in metres, e.g. length = \"23 m\"".into(),
        };
        assert_eq!(
            e.to_string(),
            "plant.toml:12:10: segment[plc-tap1].length: length must be positive, got \"-3 m\"\n  \
             hint: write the cable run in metres, e.g. length = \"23 m\""
        );
        assert_eq!(e.exit_code(), 2);
    }

    #[test]
    fn display_without_place_or_field() {
        let e = PlantError {
            file: "missing.toml".into(),
            line: 0,
            column: 0,
            field: String::new(),
            message: "cannot read the file: not found".into(),
            hint: String::new(),
        };
        assert_eq!(e.to_string(), "missing.toml: cannot read the file: not found");
    }
}
