//! Writing the extracted plant in the project's plant-file format, commented with how it
//! was made. The text is read back with the project's own loader before it is written.

use super::load::EndLoad;
use super::merge::Run;
use super::roundtrip::node_name;

/// `value` with an SI prefix and six significant digits, e.g. `eng(1.95e-8, "s")` is
/// `"19.5 ns"`; plant files read it back with their units parser.
pub fn eng(value: f64, unit: &str) -> String {
    let a = value.abs();
    let (scale, prefix) = if a == 0.0 {
        (1.0, "")
    } else if a >= 1e9 {
        (1e-9, "G")
    } else if a >= 1e6 {
        (1e-6, "M")
    } else if a >= 1e3 && unit != "m" {
        (1e-3, "k")
    } else if a >= 1.0 || unit == "m" {
        (1.0, "")
    } else if a >= 1e-3 {
        (1e3, "m")
    } else if a >= 1e-6 {
        (1e6, "u")
    } else if a >= 1e-9 {
        (1e9, "n")
    } else if a >= 1e-12 {
        (1e12, "p")
    } else {
        (1e15, "f")
    };
    let v = value * scale;
    let digits = if v.abs() >= 100.0 {
        3
    } else if v.abs() >= 10.0 {
        4
    } else {
        5
    };
    let s = format!("{v:.digits$}");
    let s = if s.contains('.') { s.trim_end_matches('0').trim_end_matches('.').to_string() } else { s };
    format!("{s} {prefix}{unit}")
}

/// Everything the plant file states besides the runs and the load.
#[derive(Debug, Clone, PartialEq)]
pub struct Header<'a> {
    pub name: &'a str,
    /// Comment lines on how the plant was made (without `#`).
    pub how: Vec<String>,
    pub sample_rate: f64,
    pub duration: f64,
    /// Velocity factor, or the preset every run is made of.
    pub velocity_factor: f64,
    pub preset: Option<&'a str>,
    pub rs: f64,
    pub emf: f64,
    pub rise: f64,
    pub delay: f64,
}

fn quoted(s: &str) -> String {
    let mut o = String::from("\"");
    for ch in s.chars() {
        match ch {
            '"' => o.push_str("\\\""),
            '\\' => o.push_str("\\\\"),
            c if c.is_control() => o.push(' '),
            c => o.push(c),
        }
    }
    o.push('"');
    o
}

/// The plant file's text.
pub fn plant_text(h: &Header, lines: &[Run], load: EndLoad) -> String {
    let mut s = String::new();
    for l in &h.how {
        s += &format!("# {l}\n");
    }
    s += "\n[plant]\n";
    s += &format!("name = {}\n", quoted(h.name));
    s += &format!("sample_rate = \"{}\"\n", eng(h.sample_rate, "Hz"));
    s += &format!("duration = \"{}\"\n", eng(h.duration, "s"));
    s += "notes = [\n  \"Extracted from a step response: an equivalent line with the same driving-point response.\",\n  \"A branched plant's layout is not recovered; the device at the port sees the same plant.\",\n]\n";
    for (i, r) in lines.iter().enumerate() {
        s += &format!("\n[cable.run{}]\n", i + 1);
        match h.preset {
            Some(p) => s += &format!("preset = {}\n", quoted(p)),
            None => s += &format!("velocity_factor = {}\n", h.velocity_factor),
        }
        s += &format!("impedance = \"{}\"\n", eng(r.z, "ohm"));
    }
    let n = lines.len();
    s += "\n";
    for i in 0..=n {
        s += &format!("[node.{}]\n", node_name(i, n));
        if i == n {
            s += &format!("load = {}\n", load.plant_text());
        }
    }
    for (i, r) in lines.iter().enumerate() {
        s += &format!(
            "\n[[segment]]\nname = \"run{0}\"\nfrom = \"{1}\"\nto = \"{2}\"\ncable = \"run{0}\"\nlength = \"{3}\"   # {4} to {5} from the port\n",
            i + 1,
            node_name(i, n),
            node_name(i + 1, n),
            eng(r.length(), "m"),
            eng(r.start, "m"),
            eng(r.end, "m"),
        );
    }
    s += "\n[drive]\nkind = \"source\"\nnode = \"port\"\n";
    s += &format!("resistance = \"{}\"\n", eng(h.rs, "ohm"));
    s += &format!(
        "waveform = {{ step = \"{}\", rise = \"{}\", delay = \"{}\" }}\n",
        eng(h.emf, "V"),
        eng(h.rise, "s"),
        eng(h.delay, "s")
    );
    s += "\n[[probe]]\nname = \"port\"\nnode = \"port\"\n";
    s
}
