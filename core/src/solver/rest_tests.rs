//! `Solver::is_at_rest` counts every state a later step could send out, not only the waves.
use crate::network::{Drive, Junction, Line, Network, Shunt};
use crate::solver::Solver;
use crate::Wide;

#[test]
fn a_choke_holding_state_is_not_at_rest_and_sends_it_out() {
    // A 50 Ω line, a choke (port resistance 4 kΩ), a 50 Ω line into 50 Ω; undriven.
    let lines = [Line { z_milliohm: 50_000, delay: 3, a: 0, b: 1 }, Line { z_milliohm: 50_000, delay: 3, a: 1, b: 2 }];
    let juncs = [
        Junction::Node { shunt: Shunt::Open },
        Junction::SeriesInductor { port_milliohm: 4_000_000, milliohm: 0 },
        Junction::Node { shunt: Shunt::Resistor { milliohm: 50_000 } },
    ];
    let net = Network {
        lines: &lines,
        junctions: &juncs,
        elements: &[],
        losses: &[],
        drive: Drive::None,
        probes: &[],
        io_shift: 12,
        volts_per_code: 1e-3,
    };
    let mut s = Solver::<Wide, 8, 4, 16, 0>::new();
    s.load(&net).unwrap();
    assert!(s.is_at_rest());
    // Every wave zero, the inductor's state not: the plant still holds energy.
    let choke = usize::from(s.n_series);
    s.pairs[choke].s = 1 << 20;
    assert!(!s.is_at_rest(), "a choke state alone is not rest");
    s.step(0);
    assert!(s.a.iter().any(|w| *w != 0), "the state comes out as waves at the next step");
}
