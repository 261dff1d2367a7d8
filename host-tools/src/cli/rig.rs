//! `tidewire rig`: drive a rig over its control link (a TCP address, such as the emulated
//! rig's UART, or a serial device). Exit codes: 0 done, 1 the rig refused or a check failed,
//! 2 bad input, 3 the rig did not answer.
//!
//! Caution: a rig port is a low-voltage test connection. Never connect it to drive outputs,
//! mains or anything above the converters' range; follow local codes and licensed practice.
use super::{io_failure, load_and_prepare, Failure, ProfileArg};
use crate::compile::{Compiled, ProfileKind};
use crate::host_core::run_core;
use crate::rig::session::{self, plant_events};
use crate::rig::{RigConnection, RigError};
use clap::{Args, Subcommand};
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};
use tidewire_core::Shunt;
use tidewire_link::message::MAX_CAPTURE_PROBES;
use tidewire_link::{Action, CaptureState, Request, Trigger};

#[derive(Debug, Args)]
pub struct RigArgs {
    /// The rig: `tcp:HOST:PORT` (e.g. the emulated rig) or a serial device (/dev/ttyACM0).
    #[arg(long, short = 'c', value_name = "ADDRESS")]
    pub connect: String,
    /// How long to wait for each answer, milliseconds.
    #[arg(long, default_value_t = 3000, value_name = "MS")]
    pub timeout: u64,
    #[command(subcommand)]
    pub command: RigCommand,
}

#[derive(Debug, Subcommand)]
pub enum RigCommand {
    /// Protocol version and capacities of the rig.
    Hello,
    /// Samples run, overruns, step times, saturations, capture state.
    Status {
        /// Exit 1 when the rig counted more overruns than this.
        #[arg(long)]
        max_overruns: Option<u32>,
    },
    /// Load a plant file (compiled here; its device model too, on an emulated rig) or an image.
    Load {
        file: PathBuf,
        #[arg(long, value_enum, default_value = "wide")]
        profile: ProfileArg,
    },
    /// Reset the plant to rest and run from sample 0.
    Start,
    /// Stop running.
    Stop,
    /// Set the sample period in ticks of the rig's sample clock (see `hello`).
    Period { ticks: u32 },
    /// Schedule changes: the plant file's events, or one change at a sample number.
    Schedule {
        /// Schedule every `[[event]]` of this plant file at its sample.
        #[arg(long, value_name = "PLANT.toml")]
        plant: Option<PathBuf>,
        /// Sample number for a single change.
        #[arg(long)]
        at: Option<u64>,
        /// Break the node with this junction number (`inspect` and the compiler name them).
        #[arg(long, value_name = "JUNCTION")]
        r#break: Option<u16>,
        /// Join a broken node again.
        #[arg(long, value_name = "JUNCTION")]
        join: Option<u16>,
        /// Remove the node's load (open).
        #[arg(long, value_name = "JUNCTION")]
        open: Option<u16>,
        /// Short the node to return.
        #[arg(long, value_name = "JUNCTION")]
        short: Option<u16>,
        /// Set the node's load to a resistor: JUNCTION:OHMS.
        #[arg(long, value_name = "JUNCTION:OHMS")]
        resistor: Option<String>,
    },
    /// Forget every scheduled change.
    ClearEvents,
    /// Arm a capture of up to four probes.
    Arm {
        /// Probes by number (0 = first `[[probe]]`) or, with --plant, by name; comma-separated.
        #[arg(long)]
        probes: String,
        /// Samples to record.
        #[arg(long)]
        length: u32,
        /// Start with this sample.
        #[arg(long, conflicts_with_all = ["on_event", "level"])]
        at: Option<u64>,
        /// Start with the next scheduled change.
        #[arg(long)]
        on_event: bool,
        /// Start when the probe named by --level-probe crosses this many volts (needs --plant).
        #[arg(long, allow_hyphen_values = true)]
        level: Option<f64>,
        #[arg(long, default_value = "0")]
        level_probe: String,
        /// Trigger on a falling crossing (default rising).
        #[arg(long)]
        falling: bool,
        /// The plant file loaded on the rig (for probe names and volts).
        #[arg(long, value_name = "PLANT.toml")]
        plant: Option<PathBuf>,
    },
    /// Read a finished capture to CSV (and a picture against the host's prediction).
    Read {
        #[arg(long, value_name = "OUT.csv")]
        csv: PathBuf,
        /// Picture of the capture over the host core's run of the same plant and events.
        #[arg(long, value_name = "OUT.svg", requires = "plant")]
        svg: Option<PathBuf>,
        /// The plant file loaded on the rig: volts, names, and the host run to compare with.
        #[arg(long, value_name = "PLANT.toml")]
        plant: Option<PathBuf>,
        #[arg(long, value_enum, default_value = "wide")]
        profile: ProfileArg,
        /// Exit 1 unless the capture equals the host core's run bit for bit (needs --plant).
        #[arg(long, requires = "plant")]
        check: bool,
        /// Wait up to this many milliseconds for the capture to finish.
        #[arg(long, default_value_t = 10_000, value_name = "MS")]
        wait: u64,
    },
}

fn bad(message: impl Into<String>) -> Failure {
    Failure { code: 2, message: format!("error: {}", message.into()) }
}

impl From<RigError> for Failure {
    fn from(e: RigError) -> Self {
        Failure { code: e.exit_code(), message: format!("error: {e}") }
    }
}

pub(super) fn run(args: RigArgs) -> Result<i32, Failure> {
    // Check every argument and file before talking to the rig.
    let plan = prepare(&args.command)?;
    let mut c = RigConnection::open(&args.connect, Duration::from_millis(args.timeout.max(1)))?;
    execute(&mut c, &args.command, plan)
}

/// What a command needs from files, checked before connecting.
enum Plan {
    None,
    Load { image: Vec<u8>, compiled: Option<Box<Compiled>>, name: String },
    Events(Vec<(u64, Action)>),
    Arm(Request<'static>),
    Read(Option<Box<Compiled>>),
}

fn compile_plant(path: &Path, profile: ProfileKind) -> Result<Compiled, Failure> {
    load_and_prepare(path, profile).map(|(_, c, _)| c)
}

/// Largest image file read: far beyond any rig's staging buffer (the reference rig's holds
/// `tidewire_link::MAX_IMAGE` bytes); the rig refuses what it cannot hold.
const MAX_IMAGE_FILE: u64 = 16 << 20;

fn prepare(cmd: &RigCommand) -> Result<Plan, Failure> {
    Ok(match cmd {
        RigCommand::Load { file, profile } => {
            if file.extension().is_some_and(|e| e == "toml") {
                let (plant, c, _) = load_and_prepare(file, (*profile).into())?;
                let image = crate::emit::image_bytes(&c.network());
                Plan::Load { image, compiled: Some(Box::new(c)), name: plant.name }
            } else {
                // Bounded: a device or a huge file given as the image cannot exhaust memory.
                let image = crate::files::read_bounded(file, MAX_IMAGE_FILE).map_err(|e| io_failure(file, e))?;
                Plan::Load { image, compiled: None, name: file.display().to_string() }
            }
        }
        RigCommand::Schedule { plant, at, r#break, join, open, short, resistor } => {
            if let Some(p) = plant {
                if at.is_some()
                    || r#break.is_some()
                    || join.is_some()
                    || open.is_some()
                    || short.is_some()
                    || resistor.is_some()
                {
                    return Err(bad("schedule takes either --plant or --at with one change, not both"));
                }
                let c = compile_plant(p, ProfileKind::Wide)?;
                let ev = plant_events(&c);
                if ev.is_empty() {
                    return Err(bad(format!("{}: the plant file has no [[event]] to schedule", p.display())));
                }
                return Ok(Plan::Events(ev));
            }
            let at = at.ok_or_else(|| bad("schedule needs --plant, or --at SAMPLE with one change"))?;
            let mut actions = vec![];
            if let Some(j) = r#break {
                actions.push(Action::Break { junction: *j });
            }
            if let Some(j) = join {
                actions.push(Action::Join { junction: *j });
            }
            if let Some(j) = open {
                actions.push(Action::SetShunt { junction: *j, shunt: Shunt::Open });
            }
            if let Some(j) = short {
                actions.push(Action::SetShunt { junction: *j, shunt: Shunt::Short });
            }
            if let Some(r) = resistor {
                let parsed = r
                    .split_once(':')
                    .and_then(|(j, o)| Some((j.trim().parse::<u16>().ok()?, o.trim().parse::<f64>().ok()?)));
                let (j, ohms) =
                    parsed.ok_or_else(|| bad(format!("--resistor {r:?}: give JUNCTION:OHMS, e.g. 3:120")))?;
                let milliohm = crate::compile::to_milliohm(ohms).ok_or_else(|| {
                    bad(format!("--resistor {r:?}: ohms must be positive, from 0.001 (1 mohm) to 4294967 (4.29 Mohm)"))
                })?;
                actions.push(Action::SetShunt { junction: j, shunt: Shunt::Resistor { milliohm } });
            }
            if actions.len() != 1 {
                return Err(bad("give exactly one change: --break, --join, --open, --short or --resistor"));
            }
            Plan::Events(vec![(at, actions[0])])
        }
        RigCommand::Arm { probes, length, at, on_event, level, level_probe, falling, plant } => {
            let c = plant.as_deref().map(|p| compile_plant(p, ProfileKind::Wide)).transpose()?;
            let index = |token: &str| -> Result<u8, Failure> {
                let t = token.trim();
                if let Ok(k) = t.parse::<u8>() {
                    return Ok(k);
                }
                let c =
                    c.as_ref().ok_or_else(|| bad(format!("probe {t:?}: give its number, or --plant to use names")))?;
                c.probe_names
                    .iter()
                    .position(|(n, _)| n == t)
                    .map(|k| k as u8)
                    .ok_or_else(|| bad(format!("probe {t:?}: the plant has no probe of that name")))
            };
            let mut list = heapless::Vec::<u8, MAX_CAPTURE_PROBES>::new();
            for t in probes.split(',') {
                list.push(index(t)?).map_err(|_| bad(format!("at most {MAX_CAPTURE_PROBES} probes per capture")))?;
            }
            let trigger = match (at, on_event, level) {
                (Some(n), false, None) => Trigger::AtSample(*n),
                (None, true, None) => Trigger::OnEvent,
                (None, false, Some(v)) => {
                    let c = c.as_ref().ok_or_else(|| bad("--level is in volts: give --plant to convert it"))?;
                    let probe = index(level_probe)?;
                    let lsb = c.volts_per_lsb();
                    let raw = (v / lsb).round();
                    if !raw.is_finite() || raw.abs() > i32::MAX as f64 {
                        return Err(bad(format!("--level {v}: outside the plant's wave range")));
                    }
                    Trigger::OnLevel { probe, level: raw as i32, rising: !falling }
                }
                _ => return Err(bad("arm needs one trigger: --at SAMPLE, --on-event or --level VOLTS")),
            };
            Plan::Arm(Request::Arm { probes: list, length: *length, trigger })
        }
        RigCommand::Read { plant, profile, csv, svg, .. } => {
            // Outputs are bad input too (exit 2): checked against the plant read and each
            // other before connecting, not after the rig has been asked for its capture.
            let mut outs: Vec<(&str, &Path)> = vec![("--csv", csv)];
            if let Some(svg) = svg {
                outs.push(("--svg", svg));
            }
            let inputs: Vec<&Path> = plant.as_deref().into_iter().collect();
            super::precheck_outputs(&inputs, &outs)?;
            Plan::Read(plant.as_deref().map(|p| compile_plant(p, (*profile).into())).transpose()?.map(Box::new))
        }
        _ => Plan::None,
    })
}

fn execute(c: &mut RigConnection, cmd: &RigCommand, plan: Plan) -> Result<i32, Failure> {
    match (cmd, plan) {
        (RigCommand::Hello, _) => {
            let h = session::hello(c)?;
            println!("link protocol {}", h.version);
            println!(
                "solver capacity: {} line ends, {} junctions, {} waves of delay, {} lossy line ends",
                h.ports, h.junctions, h.memory, h.losses
            );
            println!(
                "image up to {} bytes, capture {} values, device model {} samples",
                h.max_image, h.capture_values, h.dut_samples
            );
            println!(
                "sample clock {} Hz, period {} ticks ({:.1} samples/s)",
                h.tick_hz,
                h.period_ticks,
                h.tick_hz as f64 / h.period_ticks.max(1) as f64
            );
            Ok(0)
        }
        (RigCommand::Status { max_overruns }, _) => {
            let s = session::status(c)?;
            println!("running {}", if s.running { "yes" } else { "no" });
            println!("samples {}", s.samples);
            println!("overruns {}", s.overruns);
            println!("worst step cycles {}", s.worst_cycles);
            println!("last step cycles {}", s.last_cycles);
            println!("saturations {}", s.saturations);
            println!("period ticks {}", s.period_ticks);
            println!("image crc {:#010x}", s.image_crc);
            println!("events pending {}", s.events_pending);
            println!("capture {}", capture_text(s.capture));
            match max_overruns {
                Some(m) if s.overruns > *m => {
                    eprintln!("error: the rig counted {} overruns, more than the {m} allowed", s.overruns);
                    Ok(1)
                }
                _ => Ok(0),
            }
        }
        (RigCommand::Load { .. }, Plan::Load { image, compiled, name }) => {
            let h = session::hello(c)?;
            let crc = session::load_image(c, &image)?;
            println!("loaded \"{name}\": image {} bytes, body CRC {crc:#010x}", image.len());
            if let Some(comp) = compiled {
                if session::load_device_model(c, &comp, &h)? {
                    println!("device model loaded (the rig's software stand-in for the converters)");
                }
            }
            Ok(0)
        }
        (RigCommand::Start, _) => session::ok(c, &Request::Start).map(|_| 0).map_err(Into::into),
        (RigCommand::Stop, _) => session::ok(c, &Request::Stop).map(|_| 0).map_err(Into::into),
        (RigCommand::Period { ticks }, _) => {
            session::ok(c, &Request::SetPeriod { ticks: *ticks }).map(|_| 0).map_err(Into::into)
        }
        (RigCommand::ClearEvents, _) => session::ok(c, &Request::ClearEvents).map(|_| 0).map_err(Into::into),
        (RigCommand::Schedule { .. }, Plan::Events(ev)) => {
            for (at, action) in &ev {
                session::ok(c, &Request::Schedule { at: *at, action: *action })?;
                println!("scheduled {action:?} at sample {at}");
            }
            Ok(0)
        }
        (RigCommand::Arm { .. }, Plan::Arm(req)) => session::ok(c, &req).map(|_| 0).map_err(Into::into),
        (RigCommand::Read { csv, svg, check, wait, .. }, Plan::Read(comp)) => {
            read(c, csv, svg.as_deref(), comp.as_deref(), *check, Duration::from_millis(*wait))
        }
        _ => Err(bad("internal: command and plan disagree")),
    }
}

fn capture_text(s: CaptureState) -> String {
    match s {
        CaptureState::Idle => "idle".into(),
        CaptureState::Armed => "armed".into(),
        CaptureState::Filling { start, filled } => format!("filling from sample {start}: {filled} samples"),
        CaptureState::Done { start, length, columns, .. } => {
            format!("done: {length} samples of {columns} probes from sample {start}")
        }
    }
}

fn read(
    c: &mut RigConnection,
    csv: &Path,
    svg: Option<&Path>,
    comp: Option<&Compiled>,
    check: bool,
    wait: Duration,
) -> Result<i32, Failure> {
    let mut outs: Vec<(&str, &Path)> = vec![("--csv", csv)];
    if let Some(svg) = svg {
        outs.push(("--svg", svg));
    }
    super::precheck_outputs(&[], &outs)?;
    let deadline = Instant::now() + wait;
    loop {
        match session::status(c)?.capture {
            CaptureState::Done { .. } => break,
            CaptureState::Idle => return Err(RigError::Refused(tidewire_link::LinkError::CaptureNotReady).into()),
            _ if Instant::now() >= deadline => {
                return Err(Failure {
                    code: 1,
                    message: format!("error: the capture did not finish within {} ms", wait.as_millis()),
                })
            }
            _ => std::thread::sleep(Duration::from_millis(20)),
        }
    }
    let probes = match session::status(c)?.capture {
        CaptureState::Done { columns, probes, .. } => probes.iter().take(columns as usize).copied().collect(),
        _ => vec![],
    };
    let (start, cols) = session::read_capture(c)?;
    let len = cols.first().map_or(0, Vec::len);
    let scale = |col: usize, raw: i32| -> Option<f64> {
        let comp = comp?;
        let k = *probes.get(col)? as usize;
        let net = comp.network();
        let p = net.probes.get(k)?;
        let v = raw as f64 * comp.volts_per_lsb();
        Some(if p.kind == tidewire_core::ProbeKind::Current {
            v / (net.lines.get(p.line as usize)?.z_milliohm as f64 / 1000.0)
        } else {
            v
        })
    };
    // Columns: sample, time, each probe in its unit (with --plant), then each raw value.
    let mut w = csv::Writer::from_writer(vec![]);
    let name = |col: usize| -> (String, &str) {
        let k = probes.get(col).copied().unwrap_or(col as u8) as usize;
        comp.and_then(|c| c.probe_names.get(k).map(|(n, u)| (n.clone(), *u))).unwrap_or((format!("probe {k}"), ""))
    };
    let mut header = vec!["sample".to_string(), "time (s)".to_string()];
    if comp.is_some() {
        header.extend((0..cols.len()).map(|k| format!("{} ({})", name(k).0, name(k).1)));
    }
    header.extend((0..cols.len()).map(|k| format!("{} (raw)", name(k).0)));
    let dt = comp.map_or(0.0, |c| c.dt);
    let row_err = |e: csv::Error| io_failure(csv, e);
    w.write_record(&header).map_err(row_err)?;
    for n in 0..len {
        // Without the plant the sample period is unknown: the time column stays empty.
        let time = if comp.is_some() { format!("{:.6e}", (start + n as u64) as f64 * dt) } else { String::new() };
        let mut row = vec![(start + n as u64).to_string(), time];
        if comp.is_some() {
            row.extend((0..cols.len()).map(|k| scale(k, cols[k][n]).map_or(String::new(), |v| format!("{v:.6e}"))));
        }
        row.extend((0..cols.len()).map(|k| cols[k][n].to_string()));
        w.write_record(&row).map_err(row_err)?;
    }
    let bytes = w.into_inner().map_err(|e| io_failure(csv, e.to_string()))?;
    crate::emit::write_atomic(csv, &bytes).map_err(|e| io_failure(csv, e))?;
    println!("read {len} samples of {} probes from sample {start} -> {}", cols.len(), csv.display());
    let Some(comp) = comp else { return Ok(0) };
    // The host core's run of the same plant and its events, for the picture and the check.
    let host = run_core(comp, start as usize + len, &[], &|_| {}).map_err(|e| bad(e.to_string()))?;
    let lsb = comp.volts_per_lsb();
    let mut differ = 0usize;
    let mut captured = vec![];
    let mut predicted = vec![];
    for (col, v) in cols.iter().enumerate() {
        let k = probes.get(col).copied().unwrap_or(0) as usize;
        let got: Vec<f64> = v.iter().map(|r| scale(col, *r).unwrap_or(*r as f64 * lsb)).collect();
        let want: Vec<f64> = host.recording.probes.get(k).map(|t| t[start as usize..].to_vec()).unwrap_or_default();
        differ += got.iter().zip(&want).filter(|(a, b)| a.to_bits() != b.to_bits()).count();
        captured.push(got);
        predicted.push(want);
    }
    println!("capture vs host core run: {} of {} values differ", differ, len * cols.len());
    if let Some(svg) = svg {
        let names: Vec<(String, String)> = (0..cols.len()).map(|k| (name(k).0, name(k).1.to_string())).collect();
        let plots: Vec<_> = (0..cols.len())
            .map(|k| crate::plot::WaveformPlot {
                title: &names[k].0,
                dt: comp.dt,
                t0: 0.0,
                unit: &names[k].1,
                emulated: crate::plot::Series { label: "rig capture", values: &captured[k] },
                reference: crate::plot::Series { label: "host core run", values: &predicted[k] },
                extra: vec![],
                whole_run_peak: None,
            })
            .collect();
        crate::plot::write_waveforms(svg, &plots).map_err(|e| bad(e.to_string()))?;
        println!("picture -> {}", svg.display());
    }
    Ok(if check && differ > 0 { 1 } else { 0 })
}
