//! The node groups after an event are those a full rebuild gives: `reschedule_node` moves one
//! entry, and every event of a sequence over a plant with every node kind is checked.
use crate::network::{Drive, Junction, Line, Network, Shunt};
use crate::solver::Solver;
use crate::{Narrow, Profile, Wide};

/// A tree with nodes of one, two, three and four ports and a series resistor, a source at
/// junction 0. Junctions: 0 source node (1 port), 1 four-port tap, 2 two-port step,
/// 3 series resistor, 4 three-port tap, 5..=7 one-port ends.
fn check<P: Profile>() {
    let z = 100_000;
    let lines = [
        Line { z_milliohm: z, delay: 3, a: 0, b: 1 },
        Line { z_milliohm: z, delay: 2, a: 1, b: 2 },
        Line { z_milliohm: 60_000, delay: 4, a: 2, b: 3 },
        Line { z_milliohm: 60_000, delay: 2, a: 3, b: 4 },
        Line { z_milliohm: z, delay: 5, a: 1, b: 5 },
        Line { z_milliohm: z, delay: 1, a: 1, b: 6 },
        Line { z_milliohm: z, delay: 2, a: 4, b: 7 },
        Line { z_milliohm: z, delay: 3, a: 4, b: 8 },
    ];
    let r = |milliohm| Shunt::Resistor { milliohm };
    let juncs = [
        Junction::Node { shunt: Shunt::Open },
        Junction::Node { shunt: Shunt::Open },
        Junction::Node { shunt: r(500_000) },
        Junction::Series { milliohm: 2_000 },
        Junction::Node { shunt: Shunt::Open },
        Junction::Node { shunt: r(100_000) },
        Junction::Node { shunt: Shunt::Open },
        Junction::Node { shunt: Shunt::Short },
        Junction::Node { shunt: r(47_000) },
    ];
    let net = Network {
        lines: &lines,
        junctions: &juncs,
        elements: &[],
        losses: &[],
        drive: Drive::Source { junction: 0, milliohm: 50_000 },
        probes: &[],
        io_shift: 0,
        volts_per_code: 1e-3,
    };
    let mut s = Solver::<P, 24, 12, 64, 0>::new();
    s.load(&net).unwrap();
    let events: [(u16, Option<Shunt>, bool); 16] = [
        (5, Some(Shunt::Open), false),
        (5, Some(Shunt::Short), false),
        (1, None, true),
        (4, Some(r(1_000)), false),
        (2, None, true),
        (7, Some(r(80_000)), false),
        (1, None, false),
        (6, None, true),
        (4, None, true),
        (5, Some(r(100_000)), false),
        (2, None, false),
        (8, Some(Shunt::Short), false),
        (4, None, false),
        (6, None, false),
        (7, Some(Shunt::Short), false),
        (1, Some(Shunt::Short), false),
    ];
    for (k, (j, shunt, broken)) in events.into_iter().enumerate() {
        match shunt {
            Some(sh) => s.set_shunt(j, sh).unwrap(),
            None => s.set_broken(j, broken).unwrap(),
        }
        let (nodes, bounds) = (s.nodes, s.node_bounds);
        s.schedule_nodes();
        assert_eq!(bounds, s.node_bounds, "event {k}: group bounds");
        assert_eq!(nodes, s.nodes, "event {k}: group entries");
        s.step(1000);
    }
}

#[test]
fn every_event_leaves_the_groups_of_a_full_rebuild() {
    check::<Wide>();
    check::<Narrow>();
}
