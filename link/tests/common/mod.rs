//! Shared test fixtures: a small plant with a rig port, its image, a rig, and a client.
#![allow(dead_code)]

use tidewire_core::image::header;
use tidewire_core::{Drive, Junction, Line, Network, Probe, ProbeKind, Shunt, Side, Wide};
use tidewire_link::message::{MAX_CAPTURE_PROBES, MAX_CHUNK};
use tidewire_link::{pack, unpack, Action, Clock, Reply, Request, Rig, MAX_WIRE, PROTOCOL_VERSION};

/// The rig under test: 32 line ends, 16 junctions, 2048 waves, 4096 captured values,
/// 512 samples of device model.
pub type TestRig = Rig<Wide, 32, 16, 2048, 0, 4096, 512>;

pub const CLOCK: Clock = Clock { tick_hz: 25_000_000, min_period: 16, max_period: 1 << 24 };

pub fn rig() -> Box<TestRig> {
    Box::new(TestRig::new(CLOCK, 1000))
}

const LINES_A: [Line; 2] =
    [Line { z_milliohm: 100_000, delay: 5, a: 0, b: 1 }, Line { z_milliohm: 100_000, delay: 7, a: 1, b: 2 }];
const JUNCS_A: [Junction; 3] = [
    Junction::Node { shunt: Shunt::Open },
    Junction::Node { shunt: Shunt::Open },
    Junction::Node { shunt: Shunt::Resistor { milliohm: 100_000 } },
];
const LINES_B: [Line; 1] = [Line { z_milliohm: 50_000, delay: 3, a: 0, b: 1 }];
const JUNCS_B: [Junction; 2] = [Junction::Node { shunt: Shunt::Open }, Junction::Node { shunt: Shunt::Short }];
const PROBES: [Probe; 2] = [
    Probe { kind: ProbeKind::Voltage, line: 0, side: Side::A },
    Probe { kind: ProbeKind::Voltage, line: 0, side: Side::B },
];

/// Plant A: rig port, 5 samples of 100 ohm to a joint (junction 1, breakable), 7 more to a
/// matched 100 ohm end. Plant B: 3 samples of 50 ohm into a short (a different plant).
pub fn network(which: char) -> Network<'static> {
    let (lines, junctions): (&'static [Line], &'static [Junction]) =
        if which == 'a' { (&LINES_A, &JUNCS_A) } else { (&LINES_B, &JUNCS_B) };
    Network {
        lines,
        junctions,
        elements: &[],
        losses: &[],
        drive: Drive::Rig { junction: 0, latency: 2 },
        probes: &PROBES,
        io_shift: 8,
        volts_per_code: 1.0e-3,
    }
}

/// The image of a network (header + postcard body).
pub fn image(net: &Network<'_>) -> Vec<u8> {
    let mut body = vec![0u8; 4096];
    let n = postcard::to_slice(net, &mut body).expect("fits").len();
    body.truncate(n);
    let mut out = header(&body).to_vec();
    out.extend_from_slice(&body);
    out
}

/// Send one request through the frame layer and return the decoded reply.
pub fn call(rig: &mut TestRig, seq: u16, req: &Request<'_>) -> Reply {
    let mut wire = [0u8; MAX_WIRE];
    let n = pack(PROTOCOL_VERSION, seq, req, &mut wire).expect("request packs");
    raw(rig, &mut wire[..n - 1]).1
}

/// Hand packed bytes (no delimiter) to the rig; returns the reply's sequence number and body.
pub fn raw(rig: &mut TestRig, packed: &mut [u8]) -> (u16, Reply) {
    let mut out = [0u8; MAX_WIRE];
    let n = rig.handle_frame(packed, &mut out);
    assert!(n > 0, "the rig always answers");
    let f = unpack(&mut out[..n - 1]).expect("reply frame is valid");
    assert_eq!(f.version, PROTOCOL_VERSION);
    let (reply, rest) = postcard::take_from_bytes::<Reply>(f.body).expect("reply decodes");
    assert!(rest.is_empty());
    (f.seq, reply)
}

/// Upload and commit an image in chunks.
pub fn load(rig: &mut TestRig, img: &[u8]) -> Reply {
    assert_eq!(call(rig, 1, &Request::LoadBegin { len: img.len() as u32 }), Reply::Ok);
    for (k, c) in img.chunks(MAX_CHUNK).enumerate() {
        let r = call(rig, 2, &Request::LoadChunk { offset: (k * MAX_CHUNK) as u32, data: c });
        assert_eq!(r, Reply::Ok);
    }
    call(rig, 3, &Request::LoadCommit)
}

/// A device model: a 1 V step at sample 10 behind 50 ohm, reference 100 ohm, latency 2.
pub fn device(rig: &mut TestRig) {
    let emf: Vec<f64> = (0..300).map(|n| if n >= 10 { 1.0 } else { 0.0 }).collect();
    let r =
        call(rig, 4, &Request::DutBegin { r_device: 50.0, r_ref: 100.0, volts_per_code: 1.0e-3, latency: 2, len: 300 });
    assert_eq!(r, Reply::Ok);
    let bytes: Vec<u8> = emf.iter().flat_map(|v| v.to_le_bytes()).collect();
    for (k, c) in bytes.chunks(MAX_CHUNK / 8 * 8).enumerate() {
        let r = call(rig, 5, &Request::DutChunk { offset: (k * (MAX_CHUNK / 8 * 8)) as u32, data: c });
        assert_eq!(r, Reply::Ok);
    }
}

/// A rig loaded with plant A and a device model, a break scheduled, running.
pub fn running_rig() -> Box<TestRig> {
    let mut r = rig();
    assert!(matches!(load(&mut r, &image(&network('a'))), Reply::Loaded { .. }));
    device(&mut r);
    let brk = Request::Schedule { at: 40, action: Action::Break { junction: 1 } };
    assert_eq!(call(&mut r, 6, &brk), Reply::Ok);
    assert_eq!(call(&mut r, 7, &Request::Start), Reply::Ok);
    r
}

/// One sample driven by the rig's own device model; returns the DAC code.
pub fn tick(r: &mut TestRig) -> i16 {
    let pin = r.model_pin();
    r.sample(pin)
}

/// The probes list type.
pub type Probes = heapless::Vec<u8, MAX_CAPTURE_PROBES>;
