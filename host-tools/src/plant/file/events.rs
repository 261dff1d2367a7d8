//! `[[event]]`: what changes while the plant runs.

use toml::Spanned;

use super::locate::Source;
use super::raw::RawEvent;
use super::topology::Topology;
use super::values::{load, non_negative, positive, written};
use crate::plant::error::PlantError;
use crate::plant::model::{Event, EventAction, Span};
use crate::plant::units::UnitKind;

/// `[[event]]` entries, sorted by time (stable, so equal times keep file order).
pub fn events(src: &Source, raw: &[Spanned<RawEvent>], topo: &Topology) -> Result<Vec<Event>, PlantError> {
    let mut out = Vec::with_capacity(raw.len());
    for (i, e) in raw.iter().enumerate() {
        let r = e.get_ref();
        let path = |f: &str| format!("event[{}].{f}", i + 1);
        let at = non_negative(src, &r.at, UnitKind::Time, &path("at"), "event time")?;
        let action = match (&r.node, &r.load, &r.segment, &r.break_at) {
            (Some(node), Some(l), None, None) => {
                let id = topo.node(src, node, &path("node"))?;
                EventAction::SetLoad(id, load(src, l, &path("load"))?)
            }
            (None, None, Some(seg), Some(b)) => {
                let id = topo.segment(src, seg, &path("segment"))?;
                let d = positive(src, b, UnitKind::Length, &path("break_at"), "break distance")?;
                let len = topo.segments[id].length;
                if d >= len {
                    return Err(src.error(
                        b.span(),
                        path("break_at"),
                        format!("break at {} is not inside segment \"{}\" ({len} m long)", written(b), seg.get_ref()),
                        "give a distance from the segment's `from` end, between 0 and its length",
                    ));
                }
                EventAction::Break { segment: id, distance: d }
            }
            _ => {
                return Err(src.error(
                    e.span(),
                    format!("event[{}]", i + 1),
                    "an event is either `node` + `load`, or `segment` + `break_at`",
                    "write e.g. node = \"tap3\", load = \"open\"  or  segment = \"a-b\", break_at = \"12 m\"",
                ))
            }
        };
        let (line, column) = src.line_column(e.span().start);
        out.push(Event { at, action, span: Span { line, column } });
    }
    out.sort_by(|a, b| a.at.total_cmp(&b.at));
    Ok(out)
}
