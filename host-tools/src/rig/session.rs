//! Jobs on a rig connection: uploads in chunks, plant events, capture read-back.

use super::{RigConnection, RigError};
use crate::compile::{Compiled, CoreAction, HostDrive};
use tidewire_link::message::MAX_CHUNK;
use tidewire_link::{Action, CaptureState, Hello, Reply, Request, Status};

fn unexpected(r: Reply) -> RigError {
    RigError::Protocol(format!("{r:?}"))
}

/// The rig's version and capacities.
pub fn hello(c: &mut RigConnection) -> Result<Hello, RigError> {
    match c.call(&Request::Hello)? {
        Reply::Hello(h) => Ok(h),
        r => Err(unexpected(r)),
    }
}

/// The rig's counters.
pub fn status(c: &mut RigConnection) -> Result<Status, RigError> {
    match c.call(&Request::Status)? {
        Reply::Status(s) => Ok(s),
        r => Err(unexpected(r)),
    }
}

/// Expect a plain acknowledgement.
pub fn ok(c: &mut RigConnection, req: &Request<'_>) -> Result<(), RigError> {
    match c.call(req)? {
        Reply::Ok => Ok(()),
        r => Err(unexpected(r)),
    }
}

/// Upload an image in chunks and commit it; returns its body CRC.
pub fn load_image(c: &mut RigConnection, image: &[u8]) -> Result<u32, RigError> {
    let len = u32::try_from(image.len()).map_err(|_| RigError::Protocol("image larger than 4 GiB".into()))?;
    ok(c, &Request::LoadBegin { len })?;
    for (k, chunk) in image.chunks(MAX_CHUNK).enumerate() {
        ok(c, &Request::LoadChunk { offset: (k * MAX_CHUNK) as u32, data: chunk })?;
    }
    match c.call(&Request::LoadCommit)? {
        Reply::Loaded { crc } => Ok(crc),
        r => Err(unexpected(r)),
    }
}

/// The device-model EMF to upload: the host drive's EMF with its constant tail cut to one
/// sample (the model holds the last value, as the host run does), so long runs fit.
pub fn model_emf(emf: &[f64]) -> &[f64] {
    let last = emf.last().copied();
    let keep = emf.iter().rposition(|v| Some(*v) != last).map_or(1, |i| i + 2);
    &emf[..keep.min(emf.len())]
}

/// Upload the plant's device model (rig drive only) to a rig that has a software one.
/// Returns false when there is nothing to upload (no rig drive, or real converters).
pub fn load_device_model(c: &mut RigConnection, comp: &Compiled, hello: &Hello) -> Result<bool, RigError> {
    let HostDrive::Rig { emf, dut_resistance, r_ref, latency } = &comp.host_drive else { return Ok(false) };
    if hello.dut_samples == 0 {
        return Ok(false);
    }
    let emf = model_emf(emf);
    if emf.len() > hello.dut_samples as usize {
        return Err(RigError::Protocol(format!(
            "the device model needs {} samples of stimulus, the rig holds {}",
            emf.len(),
            hello.dut_samples
        )));
    }
    ok(
        c,
        &Request::DutBegin {
            r_device: *dut_resistance,
            r_ref: *r_ref,
            volts_per_code: comp.network().volts_per_code as f64,
            latency: *latency as u16,
            len: emf.len() as u32,
        },
    )?;
    let bytes: Vec<u8> = emf.iter().flat_map(|v| v.to_le_bytes()).collect();
    let step = MAX_CHUNK / 8 * 8;
    for (k, chunk) in bytes.chunks(step).enumerate() {
        ok(c, &Request::DutChunk { offset: (k * step) as u32, data: chunk })?;
    }
    Ok(true)
}

/// The plant file's events as rig actions at their sample numbers.
pub fn plant_events(comp: &Compiled) -> Vec<(u64, Action)> {
    comp.events
        .iter()
        .map(|e| {
            let action = match e.action {
                CoreAction::SetShunt(junction, shunt) => Action::SetShunt { junction, shunt },
                CoreAction::Break(junction) => Action::Break { junction },
            };
            (e.sample as u64, action)
        })
        .collect()
}

/// Read a finished capture: one vector of raw values per column.
pub fn read_capture(c: &mut RigConnection) -> Result<(u64, Vec<Vec<i32>>), RigError> {
    let CaptureState::Done { start, length, columns, .. } = status(c)?.capture else {
        return Err(RigError::Refused(tidewire_link::LinkError::CaptureNotReady));
    };
    let mut out = vec![Vec::with_capacity(length as usize); columns as usize];
    for (col, v) in out.iter_mut().enumerate() {
        while v.len() < length as usize {
            match c.call(&Request::ReadCapture { column: col as u8, offset: v.len() as u32 })? {
                Reply::Capture { values, .. } if !values.is_empty() => v.extend(values.iter()),
                r => return Err(unexpected(r)),
            }
        }
    }
    Ok((start, out))
}
