//! Fixed-point scale and headroom.
//!
//! The core's waves are integers: wave = volts / (volts_per_code · 2^-io_shift). The scale
//! is chosen from a bound on the plant's response to its own drive: the f64 twin is run
//! over the whole drive and its largest wave W and largest node voltage V are taken, then
//!
//! * io_shift is the profile's own (`Profile::IO_SHIFT`: wide 12, narrow 4 fraction bits of
//!   a wave below one code, which keep truncation's dead band below a code or two);
//! * wide: one I/O code covers max(|E|, V)·1.1/32767 volts, so the drive and every probe fit
//!   an i16 code; waves then have 2^19 codes of range, 16 times the I/O range, for plants
//!   whose waves exceed the drive (impedance steps);
//! * narrow: one wave LSB covers max(|E|, V, W)·1.25/32767 V, so a code (2^4 LSB) covers
//!   16 times that and the I/O codes span ±2047 (12 bits);
//! * rig port: the ADC fixes one code = full scale / 2^(15 − io_shift) (wide: 32768 codes,
//!   narrow: 2048), and the report says whether the plant's waves fit.
use super::Analysis;
use crate::compile::{err, Compiled, HostDrive, ProfileKind};
use crate::plant::{Drive as PlantDrive, Plant, PlantError, Span};

pub(super) fn choose(c: &mut Compiled, plant: &Plant, file: &str, a: &mut Analysis) -> Result<(), PlantError> {
    let twin = crate::twin::run(c, c.samples, &[]);
    let peak_emf = c.host_drive.emf().iter().fold(0.0f64, |m, x| m.max(x.abs()));
    let peak_v = twin
        .probes
        .iter()
        .zip(&c.probe_names)
        .filter(|(_, (_, u))| *u == "V")
        .flat_map(|(t, _)| t.iter())
        .fold(0.0f64, |m, x| m.max(x.abs()));
    let peak_w = twin.peak_wave;
    a.peak_emf = peak_emf;
    a.peak_wave = peak_w;
    a.peak_probe_voltage = peak_v;
    if peak_emf == 0.0 {
        return Err(err(
            file,
            Span::default(),
            "drive.waveform",
            "the drive is zero for the whole run",
            "give the drive a step, pulse or samples",
        ));
    }
    let io_shift = c.profile.io_shift();
    let vpc = match (&plant.drive, c.profile) {
        (PlantDrive::Rig { adc_full_scale, .. }, ProfileKind::Wide) => adc_full_scale / 32768.0,
        (PlantDrive::Rig { adc_full_scale, .. }, ProfileKind::Narrow) => {
            adc_full_scale / (1u64 << (15 - io_shift)) as f64
        }
        (_, ProfileKind::Wide) => peak_emf.max(peak_v) * 1.1 / 32767.0,
        (_, ProfileKind::Narrow) => peak_emf.max(peak_v).max(peak_w) * 1.25 / 32767.0 * (1u64 << io_shift) as f64,
    };
    c.net.io_shift = io_shift;
    c.net.volts_per_code = vpc as f32;
    let wave_range =
        vpc * (1u64 << (if c.profile == ProfileKind::Wide { 31 } else { 15 })) as f64 / (1u64 << io_shift) as f64;
    a.wave_range = wave_range;
    a.headroom = wave_range / peak_w.max(1e-300);
    if let HostDrive::Rig { .. } = c.host_drive {
        if let PlantDrive::Rig { dac_full_scale, adc_full_scale, .. } = plant.drive {
            if peak_v > adc_full_scale {
                a.warnings.push(format!(
                    "the pin reaches {peak_v:.3} V, above the ADC full scale of {adc_full_scale} V: readings will clip"
                ));
            }
            if 2.0 * peak_w > dac_full_scale {
                a.warnings.push(format!(
                    "the DAC must drive 2·b up to {:.3} V, above its full scale of {dac_full_scale} V",
                    2.0 * peak_w
                ));
            }
        }
    }
    if a.headroom < 1.0 {
        a.warnings.push(format!(
            "waves reach {peak_w:.3} V but the {} profile holds only {wave_range:.3} V at this scale: they will saturate",
            c.profile.name()
        ));
    }
    Ok(())
}
