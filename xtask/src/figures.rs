//! The one place for the firmware figures: `docs/firmware-figures.json`, written by
//! `cargo run -p xtask -- firmware`, read by `tidewire inspect`'s MCU budget
//! (`host-tools/src/compile/budget.rs`) and rendered into the README's "How fast it is" table
//! between the `<!-- figures:begin -->` and `<!-- figures:end -->` markers.

use serde::{Deserialize, Serialize};
use std::path::Path;

/// The README markers around the generated table.
pub const BEGIN: &str = "<!-- figures:begin -->";
pub const END: &str = "<!-- figures:end -->";

/// Everything one firmware run measured.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Figures {
    /// The command that produced the file.
    pub command: String,
    /// How the counts were taken.
    pub method: String,
    pub rows: Vec<FigureRow>,
}

/// One plant on one part in one profile and form.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FigureRow {
    /// `M4` or `M0`.
    pub part: String,
    /// QEMU machine.
    pub machine: String,
    /// `wide` or `narrow`.
    pub profile: String,
    /// `generic` (the data-driven solver loading a network) or `specialised`.
    pub form: String,
    pub plant: String,
    pub ports: usize,
    pub junctions: usize,
    pub solver_ram_bytes: u32,
    pub instructions_per_sample: f64,
    pub instructions_per_port_update: f64,
    /// The slowest single sample of the timed runs (`method`): what a loop that must meet
    /// every sample period has to budget for.
    pub worst_instructions_per_sample: f64,
    /// The costliest event between two samples (a terminator removed or put back, a node
    /// broken or joined; `null` where it was not measured). It lands on the sample it precedes.
    pub event_instructions: Option<f64>,
    /// Both stimuli took the same number of SysTick ticks at `-icount shift=0`.
    pub stimuli_equal: bool,
    /// Instructions of stimulus 1 minus stimulus 0 at `-icount shift=6` (0: data-independent).
    pub stimulus_difference: f64,
}

impl Figures {
    pub fn write(&self, path: &Path) -> Result<(), String> {
        let text = serde_json::to_string_pretty(self).map_err(|e| e.to_string())? + "\n";
        write_atomic(path, &text)
    }

    #[cfg(test)]
    pub fn read(path: &Path) -> Result<Figures, String> {
        let text = std::fs::read_to_string(path).map_err(|e| format!("{}: {e}", path.display()))?;
        serde_json::from_str(&text).map_err(|e| format!("{}: {e}", path.display()))
    }

    /// The README table: one line per part, profile and form, instructions per sample at each
    /// plant size and per port-update at the largest plant that part runs.
    pub fn readme_table(&self) -> String {
        // The plants with fractional delays (`p<ports>f_…`) are reported beside their plain
        // plants in docs/firmware.md, not in this table (one row per size).
        let plain =
            Figures { rows: self.rows.iter().filter(|r| !r.plant.contains("f_")).cloned().collect(), ..self.clone() };
        let rows = &plain.rows;
        let mut sizes: Vec<usize> = rows.iter().map(|r| r.ports).collect();
        sizes.sort_unstable();
        sizes.dedup();
        let mut out = String::from("| part | profile | form |");
        for s in &sizes {
            out += &format!(" {s} ports |");
        }
        out += " per port-update, largest plant |\n|---|---|---|";
        out += &"---:|".repeat(sizes.len() + 1);
        out += "\n";
        let mut keys: Vec<(&str, &str, &str, &str)> = Vec::new();
        for r in rows {
            let k = (r.part.as_str(), r.machine.as_str(), r.profile.as_str(), r.form.as_str());
            if !keys.contains(&k) {
                keys.push(k);
            }
        }
        for (part, machine, profile, form) in keys {
            let rows: Vec<&FigureRow> =
                rows.iter().filter(|r| r.part == part && r.profile == profile && r.form == form).collect();
            out += &format!("| {part} (`{machine}`) | {profile} | {form} |");
            for s in &sizes {
                match rows.iter().find(|r| r.ports == *s) {
                    Some(r) => out += &format!(" {:.0} |", r.instructions_per_sample),
                    None => out += " — |",
                }
            }
            match rows.iter().max_by_key(|r| r.ports) {
                Some(r) => out += &format!(" {:.1} at {} ports |\n", r.instructions_per_port_update, r.ports),
                None => out += " — |\n",
            }
        }
        out
    }
}

/// Replace the block between the markers of `readme` with `table`.
pub fn with_table(readme: &str, table: &str) -> Result<String, String> {
    let (Some(b), Some(e)) = (readme.find(BEGIN), readme.find(END)) else {
        return Err(format!("README has no {BEGIN} ... {END} block"));
    };
    if e < b {
        return Err("README's figure markers are out of order".into());
    }
    Ok(format!("{}{BEGIN}\n{table}{}", &readme[..b], &readme[e..]))
}

/// Write through a temporary file and a rename, so a failed run leaves the old file whole.
pub fn write_atomic(path: &Path, text: &str) -> Result<(), String> {
    let tmp = path.with_extension("tmp");
    std::fs::write(&tmp, text).map_err(|e| format!("{}: {e}", tmp.display()))?;
    std::fs::rename(&tmp, path).map_err(|e| format!("{}: {e}", path.display()))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn root() -> std::path::PathBuf {
        Path::new(env!("CARGO_MANIFEST_DIR")).parent().unwrap().to_path_buf()
    }

    /// The README's table is the one rendered from the figures file (one fact, one place).
    #[test]
    fn readme_table_is_rendered_from_the_figures_file() {
        let f = Figures::read(&root().join("docs/firmware-figures.json")).unwrap();
        assert!(!f.rows.is_empty());
        let readme = std::fs::read_to_string(root().join("README.md")).unwrap();
        assert_eq!(with_table(&readme, &f.readme_table()).unwrap(), readme, "run `cargo run -p xtask -- firmware`");
    }

    #[test]
    fn table_replacement_keeps_the_text_around_it() {
        let r = format!("a\n{BEGIN}\nold\n{END}\nb\n");
        assert_eq!(with_table(&r, "new\n").unwrap(), format!("a\n{BEGIN}\nnew\n{END}\nb\n"));
        assert!(with_table("no markers", "x").is_err());
    }
}
