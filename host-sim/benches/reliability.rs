//! Prints the reliability figures: every case of `humsim::reliability` and
//! the 24-hour ambient run, one `bench:` line each.
//!
//! `cargo bench -p humsim --bench reliability` (add `-- quick` to skip the
//! 24-hour run).

fn main() {
    let quick = std::env::args().any(|a| a == "quick");
    let mut all = humsim::reliability::cases();
    if !quick {
        all.push(humsim::reliability::ambient_24h());
    }
    let mut failed = false;
    for case in &all {
        let t0 = std::time::Instant::now();
        match humsim::reliability::run(case) {
            Ok(o) => println!(
                "{} wall_s={:.2}",
                o.bench_line(),
                t0.elapsed().as_secs_f64()
            ),
            Err(e) => {
                eprintln!("{}: {e}", case.name);
                failed = true;
            }
        }
    }
    if failed {
        std::process::exit(1);
    }
}
