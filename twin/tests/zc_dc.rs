//! Zc networks at line ends (node-wave form, `docs/zc-model.md`) leave the DC operating
//! point where Ohm's law puts it: a line whose propagation has DC gain 1 is a wire at DC
//! whatever the network at its two ends, so only the series junctions' resistance drops
//! voltage.
use tidewire_core::{Drive, Junction, Line, Network, Probe, ProbeKind, Shunt, Side};
use tidewire_twin::{Twin, ZcRealisation};

#[test]
fn zc_ends_keep_ohms_law_at_dc() {
    // Source 1 V behind 100 ohm, two lines joined by 16.8 ohm in series, 100 ohm load:
    // v_src = (16.8 + 100)/216.8, v_far = 100/216.8 [closed form]. Ends: none, Z_inf =
    // 100 ohm + one RC section (R 50 ohm, tau 10 samples), 100 ohm alone, 150 ohm alone.
    let lines =
        [Line { z_milliohm: 100_000, delay: 3, a: 0, b: 2 }, Line { z_milliohm: 100_000, delay: 3, a: 2, b: 1 }];
    let junctions = [
        Junction::Node { shunt: Shunt::Open },
        Junction::Node { shunt: Shunt::Resistor { milliohm: 100_000 } },
        Junction::Series { milliohm: 16_800 },
    ];
    let probes = [
        Probe { kind: ProbeKind::Voltage, line: 0, side: Side::A },
        Probe { kind: ProbeKind::Voltage, line: 1, side: Side::B },
    ];
    let net = Network {
        lines: &lines,
        junctions: &junctions,
        elements: &[],
        losses: &[],
        drive: Drive::Source { junction: 0, milliohm: 100_000 },
        probes: &probes,
        io_shift: 0,
        volts_per_code: 1.0,
    };
    for zc in [0, 1, 2, 3] {
        let mut t = Twin::new(&net);
        let (r, tau) = (50.0f64, 10.0f64);
        let rc = r / (2.0 * tau);
        let port = r * rc / (r + rc);
        for l in 0..2 {
            match zc {
                1 => t.set_zc(l, 100.0, &[(port, port / rc)], ZcRealisation::NodeWave),
                2 => t.set_zc(l, 100.0, &[], ZcRealisation::NodeWave),
                3 => t.set_zc(l, 150.0, &[], ZcRealisation::NodeWave),
                _ => {}
            }
        }
        let mut out = vec![];
        for _ in 0..20000 {
            out = t.step(1.0).to_vec();
        }
        let want = [116.8 / 216.8, 100.0 / 216.8];
        for (got, want) in out.iter().zip(want) {
            assert!((got - want).abs() < 1e-12, "case {zc}: {got} against {want}");
        }
    }
}
