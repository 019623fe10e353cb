//! Write a synthetic route design (JSON) for benchmarks:
//! `cargo run --release --example make_route -- LENGTH_KM SEED OUT.json`.

fn main() {
    let args: Vec<String> = std::env::args().collect();
    if args.len() != 4 {
        eprintln!("usage: make_route LENGTH_KM SEED OUT.json");
        std::process::exit(1);
    }
    let (Ok(km), Ok(seed)) = (args[1].parse::<f64>(), args[2].parse::<u64>()) else {
        eprintln!("LENGTH_KM must be a number and SEED a whole number");
        std::process::exit(1);
    };
    let els = chordline::simulate::synthetic_route(km * 1000.0, seed);
    let text = chordline::simulate::design_json(&els);
    if let Err(e) = std::fs::write(&args[3], text) {
        eprintln!("could not write {}: {e}", args[3]);
        std::process::exit(1);
    }
    eprintln!("wrote {} elements to {}", els.len(), args[3]);
}
