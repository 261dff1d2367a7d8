//! The rig's requests do what they say: images in chunks, double buffering, events at a
//! sample, captures with each trigger, status, the device model; checked against the solver
//! run directly.
mod common;

use common::*;
use tidewire_core::{Solver, Wide};
use tidewire_link::dut::code_of;
use tidewire_link::message::READ_MAX;
use tidewire_link::{Action, CaptureState, ImageFault, LinkError, Reply, Request, Trigger};

/// The plant run directly: the same device model written out with std's `f64::round`, the
/// break applied before sample 40. Returns per sample (DAC code, probe 0, probe 1).
fn direct(samples: usize) -> Vec<(i16, i32, i32)> {
    let mut s = Box::new(Solver::<Wide, 32, 16, 2048>::new());
    s.load(&network('a')).expect("plant a loads");
    let mut dac: Vec<i16> = vec![];
    let mut out = vec![];
    for n in 0..samples {
        if n == 40 {
            s.set_broken(1, true).expect("node");
        }
        let e = if n >= 10 { 1.0 } else { 0.0 };
        let d = if dac.len() >= 2 { dac[dac.len() - 2] } else { 0 };
        let v_dac = d as f64 * 1.0e-3;
        let v = (e / 50.0 + v_dac / 100.0) / (1.0 / 50.0 + 1.0 / 100.0);
        let pin = (v / 1.0e-3).round().clamp(i16::MIN as f64, i16::MAX as f64) as i16;
        let o = s.step(pin);
        dac.push(o);
        out.push((o, s.probe_raw(0), s.probe_raw(1)));
    }
    out
}

fn read_all(r: &mut TestRig, column: u8, length: usize) -> Vec<i32> {
    let mut v = vec![];
    while v.len() < length {
        match call(r, 9, &Request::ReadCapture { column, offset: v.len() as u32 }) {
            Reply::Capture { values, .. } => {
                assert!(!values.is_empty() && values.len() <= READ_MAX);
                v.extend(values.iter());
            }
            other => panic!("read failed: {other:?}"),
        }
    }
    v
}

#[test]
fn capture_at_sample_equals_the_direct_run_bit_for_bit() {
    let mut r = running_rig();
    let probes: Probes = [0u8, 1].into_iter().collect();
    let arm = Request::Arm { probes, length: 150, trigger: Trigger::AtSample(0) };
    assert_eq!(call(&mut r, 8, &arm), Reply::Ok);
    let dac: Vec<i16> = (0..200).map(|_| tick(&mut r)).collect();
    let want = direct(200);
    assert_eq!(dac, want.iter().map(|w| w.0).collect::<Vec<_>>());
    let st = r.status();
    assert_eq!(st.capture, CaptureState::Done { start: 0, length: 150, columns: 2, probes: [0, 1, 0, 0] });
    assert_eq!(st.samples, 200);
    assert_eq!(st.events_pending, 0);
    let p0 = read_all(&mut r, 0, 150);
    let p1 = read_all(&mut r, 1, 150);
    assert_eq!(p0, want.iter().take(150).map(|w| w.1).collect::<Vec<_>>());
    assert_eq!(p1, want.iter().take(150).map(|w| w.2).collect::<Vec<_>>());
    // The break changed what the far side of the joint sees: the run is not trivial.
    assert!(p0.iter().any(|v| *v != 0));
    assert_eq!(call(&mut r, 9, &Request::ReadCapture { column: 2, offset: 0 }), Reply::Error(LinkError::OutOfRange));
    assert_eq!(call(&mut r, 9, &Request::ReadCapture { column: 0, offset: 150 }), Reply::Error(LinkError::OutOfRange));
}

#[test]
fn capture_on_event_and_on_level_start_where_they_should() {
    let want = direct(200);
    let mut r = running_rig();
    let probes: Probes = [1u8].into_iter().collect();
    assert_eq!(call(&mut r, 8, &Request::Arm { probes, length: 20, trigger: Trigger::OnEvent }), Reply::Ok);
    (0..100).for_each(|_| {
        tick(&mut r);
    });
    assert_eq!(r.status().capture, CaptureState::Done { start: 40, length: 20, columns: 1, probes: [1, 0, 0, 0] });
    assert_eq!(read_all(&mut r, 0, 20), want[40..60].iter().map(|w| w.2).collect::<Vec<_>>());

    // Level: the first sample where probe 0 rises to half its final value or more.
    let level = want.iter().map(|w| w.1).max().unwrap() / 2;
    let first = want.windows(2).position(|w| w[0].1 < level && w[1].1 >= level).unwrap() + 1;
    let mut r = running_rig();
    let probes: Probes = [0u8].into_iter().collect();
    let trig = Trigger::OnLevel { probe: 0, level, rising: true };
    assert_eq!(call(&mut r, 8, &Request::Arm { probes, length: 5, trigger: trig }), Reply::Ok);
    (0..200).for_each(|_| {
        tick(&mut r);
    });
    assert_eq!(r.status().capture, CaptureState::Done { start: first as u64, length: 5, columns: 1, probes: [0; 4] });
}

#[test]
fn a_new_image_takes_effect_between_samples_and_a_bad_one_changes_nothing() {
    let mut r = running_rig();
    (0..20).for_each(|_| {
        tick(&mut r);
    });
    let crc_a = r.status().image_crc;
    // A corrupt image (one body byte flipped): refused by its CRC, plant A keeps running.
    let mut bad = image(&network('b'));
    let last = bad.len() - 1;
    bad[last] ^= 0x40;
    assert_eq!(load(&mut r, &bad), Reply::Error(LinkError::Image(ImageFault::Crc)));
    // A plant this rig cannot hold (too many lines for 32 line ends... here: a node index
    // beyond the junction table) is refused by the core's checks.
    let mut twisted = network('a');
    let lines = [tidewire_core::Line { z_milliohm: 100_000, delay: 5, a: 0, b: 9 }];
    twisted.lines = &lines;
    assert!(matches!(load(&mut r, &image(&twisted)), Reply::Error(LinkError::Image(_))));
    assert_eq!(r.status().image_crc, crc_a);
    let want = direct(40);
    let got: Vec<i16> = (20..40).map(|_| tick(&mut r)).collect();
    assert_eq!(got, want[20..40].iter().map(|w| w.0).collect::<Vec<_>>());

    // A good image B while running: acknowledged, and in effect from the next sample on.
    let reply = load(&mut r, &image(&network('b')));
    let Reply::Loaded { crc } = reply else { panic!("{reply:?}") };
    assert_eq!(r.status().image_crc, crc_a, "not before the next sample");
    assert_eq!(load(&mut r, &image(&network('b'))), Reply::Error(LinkError::Busy));
    tick(&mut r);
    assert_eq!(r.status().image_crc, crc);
    assert_eq!(r.status().events_pending, 0, "events of plant A are dropped with it");
    assert_eq!(r.solver().junction_count(), 2);
}

#[test]
fn requests_out_of_place_are_refused() {
    let mut r = rig();
    assert_eq!(call(&mut r, 1, &Request::Start), Reply::Error(LinkError::NotLoaded));
    assert_eq!(call(&mut r, 1, &Request::LoadCommit), Reply::Error(LinkError::NoUpload));
    assert_eq!(call(&mut r, 1, &Request::LoadChunk { offset: 0, data: &[1] }), Reply::Error(LinkError::NoUpload));
    assert_eq!(call(&mut r, 1, &Request::LoadBegin { len: 1 << 20 }), Reply::Error(LinkError::TooLarge { max: 8192 }));
    assert_eq!(call(&mut r, 1, &Request::LoadBegin { len: 10 }), Reply::Ok);
    assert_eq!(
        call(&mut r, 1, &Request::LoadChunk { offset: 4, data: &[1] }),
        Reply::Error(LinkError::OutOfOrder { expected: 0 })
    );
    assert_eq!(
        call(&mut r, 1, &Request::LoadChunk { offset: 0, data: &[1; 11] }),
        Reply::Error(LinkError::TooLarge { max: 10 })
    );
    assert_eq!(call(&mut r, 1, &Request::LoadCommit), Reply::Error(LinkError::OutOfOrder { expected: 0 }));
    assert_eq!(
        call(&mut r, 1, &Request::SetPeriod { ticks: 3 }),
        Reply::Error(LinkError::BadPeriod { min: 16, max: 1 << 24 })
    );

    let mut r = running_rig();
    (0..50).for_each(|_| {
        tick(&mut r);
    });
    let past = Request::Schedule { at: 10, action: Action::Break { junction: 1 } };
    assert_eq!(call(&mut r, 1, &past), Reply::Error(LinkError::InThePast { samples: 50 }));
    let nowhere = Request::Schedule { at: 100, action: Action::Join { junction: 7 } };
    assert_eq!(call(&mut r, 1, &nowhere), Reply::Error(LinkError::BadJunction { junction: 7 }));
    let twice: Probes = [1u8, 1].into_iter().collect();
    assert_eq!(
        call(&mut r, 1, &Request::Arm { probes: twice, length: 5, trigger: Trigger::OnEvent }),
        Reply::Error(LinkError::BadProbe)
    );
    let one: Probes = [0u8].into_iter().collect();
    let big = Request::Arm { probes: one, length: 5000, trigger: Trigger::OnEvent };
    assert_eq!(call(&mut r, 1, &big), Reply::Error(LinkError::CaptureSize { max: 4096 }));
    assert_eq!(
        call(&mut r, 1, &Request::ReadCapture { column: 0, offset: 0 }),
        Reply::Error(LinkError::CaptureNotReady)
    );
    let bad_model = Request::DutBegin { r_device: f64::NAN, r_ref: 1.0, volts_per_code: 1.0, latency: 0, len: 1 };
    assert_eq!(call(&mut r, 1, &bad_model), Reply::Error(LinkError::BadModel));
    for _ in 0..16 {
        assert_eq!(call(&mut r, 1, &Request::Schedule { at: 1000, action: Action::Join { junction: 1 } }), Reply::Ok);
    }
    let more = Request::Schedule { at: 1000, action: Action::Join { junction: 1 } };
    assert_eq!(call(&mut r, 1, &more), Reply::Error(LinkError::QueueFull));
}

#[test]
fn status_counts_time_overruns_and_saturation() {
    let mut r = running_rig();
    tick(&mut r);
    r.account(120, false);
    tick(&mut r);
    r.account(90, true);
    let st = r.status();
    assert_eq!((st.worst_cycles, st.last_cycles, st.overruns, st.samples), (120, 90, 1, 2));
    // Full-scale ADC input counts as a saturation.
    r.sample(i16::MAX);
    assert_eq!(r.status().saturations, 1);
    assert_eq!(call(&mut r, 1, &Request::Stop), Reply::Ok);
    assert_eq!(r.sample(123), 0, "stopped: DAC at mid-scale, nothing runs");
    assert_eq!(r.status().samples, 3);
}

#[test]
fn rounding_of_the_device_model_matches_std() {
    for x in [0.5f64, -0.5, 1.4999999999, 2.5, -2.5, 32767.5, -32768.7, 1e9, -1e9, 0.0, -0.0, 12.49, -12.51] {
        let want = x.round().clamp(i16::MIN as f64, i16::MAX as f64) as i16;
        assert_eq!(code_of(x), want, "x = {x}");
    }
    assert_eq!(code_of(f64::NAN), 0);
}
