//! Nodes, segments and how they connect: name lookups, dangling nodes, reachability and
//! the lattice path.

use std::collections::{BTreeMap, HashMap};

use toml::Spanned;

use super::cables::Cables;
use super::locate::Source;
use super::raw::{RawLattice, RawNode, RawSegment, Text};
use super::values::{load, positive};
use crate::plant::error::PlantError;
use crate::plant::model::{Inline, Load, Node, NodeId, Segment, SegmentId, Span};
use crate::plant::units::UnitKind;

/// Nodes and segments with their name indexes, plus each node's key span.
pub struct Topology {
    pub nodes: Vec<Node>,
    pub segments: Vec<Segment>,
    node_index: HashMap<String, NodeId>,
    segment_index: HashMap<String, SegmentId>,
    node_spans: Vec<std::ops::Range<usize>>,
}

fn span_of(src: &Source, range: std::ops::Range<usize>) -> Span {
    let (line, column) = src.line_column(range.start);
    Span { line, column }
}

/// A short list of names for hints (the first few, then "...").
fn some_names<'a>(names: impl Iterator<Item = &'a String>) -> String {
    let mut v: Vec<&str> = names.map(String::as_str).collect();
    v.sort_unstable();
    let more = v.len() > 8;
    v.truncate(8);
    let mut s = v.join(", ");
    if more {
        s.push_str(", ...");
    }
    s
}

impl Topology {
    /// Read `[node.*]` (in file order) and `[[segment]]`, resolving cables and node names.
    pub fn read(
        src: &Source,
        raw_nodes: &BTreeMap<Text, Spanned<RawNode>>,
        raw_segments: &[Spanned<RawSegment>],
        cables: &mut Cables,
    ) -> Result<Topology, PlantError> {
        let mut entries: Vec<_> = raw_nodes.iter().collect();
        entries.sort_by_key(|(k, _)| k.span().start);
        let mut t = Topology {
            nodes: Vec::new(),
            segments: Vec::new(),
            node_index: HashMap::new(),
            segment_index: HashMap::new(),
            node_spans: Vec::new(),
        };
        for (key, node) in entries {
            let name = key.get_ref();
            if name.trim().is_empty() {
                return Err(src.error(
                    key.span(),
                    "node",
                    "a node name is empty",
                    "name nodes with words, e.g. [node.tap1]",
                ));
            }
            let field = format!("node.{name}.load");
            let load = match &node.get_ref().load {
                Some(raw) => load(src, raw, &field)?,
                None => Load::Open,
            };
            t.node_index.insert(name.clone(), t.nodes.len());
            t.node_spans.push(key.span());
            t.nodes.push(Node { name: name.clone(), load, span: span_of(src, key.span()) });
        }
        for seg in raw_segments {
            t.read_segment(src, seg, cables)?;
        }
        if t.nodes.is_empty() {
            return Err(src.error(
                0..0,
                "node",
                "the plant has no nodes",
                "add [node.<name>] tables and [[segment]]s joining them",
            ));
        }
        // Every node needs copper: a node with nothing attached cannot carry a wave.
        let mut connected = vec![false; t.nodes.len()];
        for s in &t.segments {
            connected[s.from] = true;
            connected[s.to] = true;
        }
        for (id, node) in t.nodes.iter().enumerate() {
            if !connected[id] {
                return Err(src.error(
                    t.node_spans[id].clone(),
                    format!("node.{}", node.name),
                    format!("node \"{}\" has no segment connected", node.name),
                    "add a [[segment]] with from/to naming this node, or remove the node",
                ));
            }
        }
        Ok(t)
    }

    fn read_segment(&mut self, src: &Source, raw: &Spanned<RawSegment>, cables: &mut Cables) -> Result<(), PlantError> {
        let s = raw.get_ref();
        let name = match &s.name {
            Some(n) => n.get_ref().clone(),
            None => format!("{}-{}", s.from.get_ref(), s.to.get_ref()),
        };
        let path = |f: &str| format!("segment[{name}].{f}");
        if name.trim().is_empty() {
            let span = s.name.as_ref().map_or(raw.span(), |n| n.span());
            return Err(src.error(span, path("name"), "a segment name is empty", "give a name"));
        }
        if let Some(&other) = self.segment_index.get(&name) {
            let span = s.name.as_ref().map_or(raw.span(), |n| n.span());
            let first = self.segments[other].span;
            return Err(src.error(
                span,
                path("name"),
                format!("duplicate segment name \"{name}\" (first used on line {})", first.line),
                "give each segment a unique `name` (segments between the same nodes need one)",
            ));
        }
        let from = self.node(src, &s.from, &path("from"))?;
        let to = self.node(src, &s.to, &path("to"))?;
        if from == to {
            return Err(src.error(
                s.to.span(),
                path("to"),
                format!("segment \"{name}\" starts and ends at node \"{}\"", s.from.get_ref()),
                "a segment joins two different nodes",
            ));
        }
        let cable = cables.resolve(src, &s.cable, &path("cable"))?;
        let length = positive(src, &s.length, UnitKind::Length, &path("length"), "length")?;
        let inline = match &s.inline {
            None => None,
            Some(i) => {
                let r = i.get_ref();
                let inductance =
                    positive(src, &r.inductance, UnitKind::Inductance, &path("inline.inductance"), "inductance")?;
                let resistance = match &r.resistance {
                    Some(x) => super::values::non_negative(
                        src,
                        x,
                        UnitKind::Resistance,
                        &path("inline.resistance"),
                        "resistance",
                    )?,
                    None => 0.0,
                };
                let at = positive(src, &r.at, UnitKind::Length, &path("inline.at"), "position")?;
                if at >= length {
                    return Err(src.error(
                        r.at.span(),
                        path("inline.at"),
                        format!("the in-line element sits {at} m along a segment of {length} m"),
                        "place it strictly inside the segment (0 < at < length)",
                    ));
                }
                Some(Inline { inductance, resistance, at })
            }
        };
        self.segment_index.insert(name.clone(), self.segments.len());
        self.segments.push(Segment { name, from, to, cable, length, span: span_of(src, raw.span()), inline });
        Ok(())
    }

    /// The node a field names, or an "unknown node" error at that field.
    pub fn node(&self, src: &Source, name: &Text, field: &str) -> Result<NodeId, PlantError> {
        self.node_index.get(name.get_ref()).copied().ok_or_else(|| {
            src.error(
                name.span(),
                field,
                format!("unknown node \"{}\"", name.get_ref()),
                format!("declare [node.{}] or use one of: {}", name.get_ref(), some_names(self.node_index.keys())),
            )
        })
    }

    /// The segment a field names, or an "unknown segment" error at that field.
    pub fn segment(&self, src: &Source, name: &Text, field: &str) -> Result<SegmentId, PlantError> {
        self.segment_index.get(name.get_ref()).copied().ok_or_else(|| {
            src.error(
                name.span(),
                field,
                format!("unknown segment \"{}\"", name.get_ref()),
                format!(
                    "segments are named by `name` or \"<from>-<to>\"; known: {}",
                    some_names(self.segment_index.keys())
                ),
            )
        })
    }

    /// Segments joined to each node: (segment, node at its other end).
    fn adjacency(&self) -> Vec<Vec<(SegmentId, NodeId)>> {
        let mut adj = vec![Vec::new(); self.nodes.len()];
        for (i, s) in self.segments.iter().enumerate() {
            adj[s.from].push((i, s.to));
            adj[s.to].push((i, s.from));
        }
        adj
    }

    /// Every node must be reachable through copper from the drive node.
    pub fn check_reachable(&self, src: &Source, drive: NodeId) -> Result<(), PlantError> {
        let adj = self.adjacency();
        let mut seen = vec![false; self.nodes.len()];
        let mut stack = vec![drive];
        seen[drive] = true;
        while let Some(n) = stack.pop() {
            for &(_, m) in &adj[n] {
                if !seen[m] {
                    seen[m] = true;
                    stack.push(m);
                }
            }
        }
        match seen.iter().position(|s| !s) {
            None => Ok(()),
            Some(id) => Err(src.error(
                self.node_spans[id].clone(),
                format!("node.{}", self.nodes[id].name),
                format!(
                    "node \"{}\" is not connected to the drive node \"{}\"",
                    self.nodes[id].name, self.nodes[drive].name
                ),
                "join this part of the plant to the rest with a [[segment]], or remove it",
            )),
        }
    }

    /// The lattice path: as given (checked to be a connected walk), else the longest
    /// simple path in metres starting at the drive node.
    pub fn lattice_path(
        &self,
        src: &Source,
        raw: Option<&Spanned<RawLattice>>,
        drive: NodeId,
    ) -> Result<Vec<SegmentId>, PlantError> {
        let Some(raw) = raw else {
            return Ok(self.longest_path_from(drive));
        };
        let names = raw.get_ref().path.get_ref();
        if names.is_empty() {
            return Err(src.error(
                raw.get_ref().path.span(),
                "lattice.path",
                "the lattice path is empty",
                "list segment names in order, or remove [lattice] for the default path",
            ));
        }
        let mut path = Vec::with_capacity(names.len());
        // The node the walk stands on after each segment; the first segment may be walked
        // either way, so its end is decided by the second.
        let mut at: Option<NodeId> = None;
        for (i, name) in names.iter().enumerate() {
            let field = format!("lattice.path[{i}]");
            let id = self.segment(src, name, &field)?;
            let s = &self.segments[id];
            at = match at {
                None if i + 1 < names.len() => {
                    // Stand on the end shared with the next segment (if it is known yet).
                    let next = self.segment_index.get(names[i + 1].get_ref());
                    let shares_to = next.is_some_and(|&n| {
                        let t = &self.segments[n];
                        t.from == s.to || t.to == s.to
                    });
                    Some(if shares_to { s.to } else { s.from })
                }
                None => Some(s.to),
                Some(n) if n == s.from => Some(s.to),
                Some(n) if n == s.to => Some(s.from),
                Some(n) => {
                    return Err(src.error(
                        name.span(),
                        field,
                        format!(
                            "segment \"{}\" does not start at node \"{}\", where the path stands",
                            s.name, self.nodes[n].name
                        ),
                        "list the segments in the order a wave travels them, end to end",
                    ))
                }
            };
            path.push(id);
        }
        Ok(path)
    }

    /// Longest simple path (by length in metres) from `start`: an iterative depth-first
    /// search (no recursion, so a long chain cannot overflow the stack) with a step budget
    /// so that a large meshed plant cannot stall the reader.
    fn longest_path_from(&self, start: NodeId) -> Vec<SegmentId> {
        let adj = self.adjacency();
        let mut on_path = vec![false; self.nodes.len()];
        // Each frame: (node, next edge to try, metres from start to the node).
        let mut stack: Vec<(NodeId, usize, f64)> = vec![(start, 0, 0.0)];
        let mut current: Vec<SegmentId> = Vec::new();
        let mut best: (f64, Vec<SegmentId>) = (0.0, Vec::new());
        // `current` is the best path so far but not yet copied; copy it before it shrinks.
        let mut best_is_current = false;
        let mut budget = 200_000usize;
        on_path[start] = true;
        while let Some(frame) = stack.last_mut() {
            let (n, k, metres) = *frame;
            if k < adj[n].len() && budget > 0 {
                frame.1 += 1;
                let (seg, m) = adj[n][k];
                if on_path[m] {
                    continue;
                }
                budget -= 1;
                on_path[m] = true;
                current.push(seg);
                let far = metres + self.segments[seg].length;
                if far > best.0 {
                    best.0 = far;
                    best_is_current = true;
                }
                stack.push((m, 0, far));
            } else {
                if best_is_current {
                    best.1 = current.clone();
                    best_is_current = false;
                }
                stack.pop();
                on_path[n] = false;
                current.pop();
            }
        }
        best.1
    }
}
