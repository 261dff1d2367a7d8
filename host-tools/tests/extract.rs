//! `tidewire extract`: synthetic captures made by the exact reference (never the core) of
//! plants of our own, extracted back into plants and checked. Each check names its source.
use std::path::Path;
use tidewire_host::extract::{extract, lossless_cable, Capture, Extraction, Options};
use tidewire_host::plant::parse_plant;
use tidewire_host::reference::{exact_response, ExactOptions};

/// A chain of (impedance ohm, length m) runs from the driven port, with `load` at the end.
fn chain_plant(
    rate: &str,
    duration: &str,
    rs: f64,
    emf: f64,
    delay: &str,
    rise: &str,
    runs: &[(f64, f64)],
    load: &str,
) -> String {
    let mut s = format!("[plant]\nname = \"test chain\"\nsample_rate = \"{rate}\"\nduration = \"{duration}\"\n\n");
    for (i, (z, _)) in runs.iter().enumerate() {
        s += &format!("[cable.c{i}]\nimpedance = \"{z} ohm\"\nvelocity_factor = 0.66\n\n");
    }
    for i in 0..=runs.len() {
        s += &format!("[node.n{i}]\n");
        if i == runs.len() {
            s += &format!("load = {load}\n");
        }
    }
    for (i, (_, l)) in runs.iter().enumerate() {
        s += &format!("\n[[segment]]\nfrom = \"n{i}\"\nto = \"n{}\"\ncable = \"c{i}\"\nlength = \"{l} m\"\n", i + 1);
    }
    s += &format!(
        "\n[drive]\nkind = \"source\"\nnode = \"n0\"\nresistance = \"{rs} ohm\"\nwaveform = {{ step = \"{emf} V\", delay = \"{delay}\", rise = \"{rise}\" }}\n\n[[probe]]\nnode = \"n0\"\n"
    );
    s
}

/// The exact reference's port voltage of plant text `text` as a capture.
fn capture_of(text: &str) -> Capture {
    let plant = parse_plant(text, "synthetic.toml", Path::new(".")).expect("test plant parses");
    let run = exact_response(&plant, &ExactOptions::for_plant(&plant)).expect("exact response");
    Capture {
        file: "synthetic.csv".into(),
        t0: 0.0,
        dt: run.dt,
        volts: run.traces[0].values.clone(),
        places: vec![(0, 0); run.traces[0].values.len()],
    }
}

/// Gaussian noise of standard deviation `sigma`, from a fixed seed (xorshift, Box–Muller).
fn add_noise(v: &mut [f64], sigma: f64, seed: u64) {
    let mut x = seed.max(1);
    let mut uniform = || {
        x ^= x << 13;
        x ^= x >> 7;
        x ^= x << 17;
        ((x >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    };
    for s in v.iter_mut() {
        let (u1, u2) = (uniform(), uniform());
        *s += sigma * (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos();
    }
}

fn opts(rs: f64, emf: f64) -> Options {
    Options {
        rs,
        emf,
        cable: lossless_cable(0.66),
        preset: None,
        rise: None,
        tolerance: 0.03,
        smooth: None,
        refine: 12,
    }
}

fn show(name: &str, x: &Extraction) {
    println!("== {name}: smooth {} ending {:?} load {:?}", x.smooth, x.profile.ending, x.load);
    println!(
        "   edge start {:e} rise {:e} offset {:e} noise {:e}",
        x.edge.start, x.edge.rise, x.edge.offset, x.edge.noise
    );
    println!("   runs {:?}", x.runs.iter().map(|r| (r.start, r.z)).collect::<Vec<_>>());
    for r in &x.lines {
        println!("   {:8.3} .. {:8.3} m  {:8.3} ohm", r.start, r.end, r.z);
    }
    println!(
        "   fit rms {:.4} -> {:.4} V in {} steps",
        x.refined.rms_before, x.refined.rms_after, x.refined.iterations
    );
    println!("   exact max {:.3} % rms {:.3} %", 100.0 * x.roundtrip.exact_max, 100.0 * x.roundtrip.exact_rms);
    match &x.roundtrip.core {
        Ok((_, m, r)) => println!("   core max {:.3} % rms {:.3} %", 100.0 * m, 100.0 * r),
        Err(e) => println!("   core: {e}"),
    }
}

const CHAIN: &[(f64, f64)] = &[(50.0, 10.0), (75.0, 6.0), (35.0, 8.0), (100.0, 5.0)];

#[test]
fn debug_profile() {
    let text = chain_plant("1 GHz", "600 ns", 50.0, 1.0, "20 ns", "0 s", CHAIN, "\"200 ohm\"");
    let cap = capture_of(&text);
    show("chain 200 ohm", &extract(&cap, &opts(50.0, 1.0), vec![], "x.toml").unwrap());
    let mut noisy = cap.clone();
    add_noise(&mut noisy.volts, 0.01, 7);
    show("chain 200 ohm noisy", &extract(&noisy, &opts(50.0, 1.0), vec![], "x.toml").unwrap());
    let text = chain_plant("1 GHz", "800 ns", 50.0, 1.0, "20 ns", "2 ns", CHAIN, "{ capacitor = \"100 pF\" }");
    let cap = capture_of(&text);
    show("chain 100 pF", &extract(&cap, &opts(50.0, 1.0), vec![], "x.toml").unwrap());
    let text = chain_plant("1 GHz", "600 ns", 50.0, 1.0, "20 ns", "0 s", CHAIN, "\"open\"");
    let cap = capture_of(&text);
    show("chain open", &extract(&cap, &opts(50.0, 1.0), vec![], "x.toml").unwrap());
}
