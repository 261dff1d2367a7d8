//! `[[probe]]`: what is measured.

use toml::Spanned;

use super::locate::Source;
use super::raw::RawProbe;
use super::topology::Topology;
use crate::plant::error::PlantError;
use crate::plant::model::{End, Probe, ProbeKind};

/// `[[probe]]` entries: a node voltage, or the current into a segment at one end.
pub fn probes(src: &Source, raw: &[Spanned<RawProbe>], topo: &Topology) -> Result<Vec<Probe>, PlantError> {
    let mut out: Vec<Probe> = Vec::with_capacity(raw.len());
    let mut lines: Vec<usize> = Vec::new();
    for (i, p) in raw.iter().enumerate() {
        let r = p.get_ref();
        let label = r.name.as_ref().map_or_else(|| format!("{}", i + 1), |n| n.get_ref().clone());
        // Refused at the first probe too many, where the user can see it (and before the
        // rest of a huge list is resolved).
        if i == tidewire_core::MAX_PROBES {
            return Err(src.error(
                p.span(),
                format!("probe[{label}]"),
                format!("{} probes, the core reads out at most {}", raw.len(), tidewire_core::MAX_PROBES),
                "remove this probe and the ones after it, or some before it",
            ));
        }
        let path = |f: &str| format!("probe[{label}].{f}");
        let (kind, default_name) = match (&r.node, &r.segment) {
            (Some(node), None) => {
                if let Some(end) = &r.end {
                    return Err(src.error(
                        end.span(),
                        path("end"),
                        "`end` is only for a current probe on a segment",
                        "remove `end`, or probe `segment = ..` instead of `node = ..`",
                    ));
                }
                let id = topo.node(src, node, &path("node"))?;
                (ProbeKind::Voltage(id), node.get_ref().clone())
            }
            (None, Some(seg)) => {
                let id = topo.segment(src, seg, &path("segment"))?;
                let Some(end) = &r.end else {
                    return Err(src.error(
                        seg.span(),
                        path("end"),
                        "a current probe needs `end = \"from\"` or `end = \"to\"`",
                        "say at which end of the segment the current is measured",
                    ));
                };
                let e = match end.get_ref().as_str() {
                    "from" => End::From,
                    "to" => End::To,
                    other => {
                        return Err(src.error(
                            end.span(),
                            path("end"),
                            format!("unknown end \"{other}\""),
                            "use end = \"from\" or end = \"to\"",
                        ))
                    }
                };
                (ProbeKind::Current(id, e), format!("{} {} current", seg.get_ref(), end.get_ref()))
            }
            _ => {
                return Err(src.error(
                    p.span(),
                    format!("probe[{label}]"),
                    "a probe needs exactly one of `node` or `segment`",
                    "write node = \"plc\" for a voltage, or segment = \"..\" with end = \"from\"",
                ))
            }
        };
        let name = r.name.as_ref().map_or(default_name, |n| n.get_ref().clone());
        let (line, _) = src.line_column(p.span().start);
        if let Some(j) = out.iter().position(|q| q.name == name) {
            let span = r.name.as_ref().map_or(p.span(), |n| n.span());
            return Err(src.error(
                span,
                path("name"),
                format!("duplicate probe name \"{name}\" (first used on line {})", lines[j]),
                "give each probe a unique `name`",
            ));
        }
        lines.push(line);
        out.push(Probe { name, kind });
    }
    Ok(out)
}
