//! Prints the reference comparison, the latency grid and the host
//! throughput of `humsim::bench`, with the wall time of each part
//! (`bench: part=… wall_s=…`). Add `quick` for the quick run.
//!
//! `cargo run --release -p humsim --example bench_parts [-- quick]`

use std::sync::atomic::{AtomicU64, Ordering};
use std::time::Instant;

use humsim::bench::{compare, latency, speed};

fn main() {
    let quick = std::env::args().any(|a| a == "quick");
    if let Err(e) = run(quick) {
        eprintln!("bench_parts: {e}");
        std::process::exit(1);
    }
}

fn run(quick: bool) -> Result<(), String> {
    let done = AtomicU64::new(0);
    let progress = |n: u64| {
        done.fetch_add(n, Ordering::Relaxed);
    };
    let opts = if quick {
        compare::Options::quick()
    } else {
        compare::Options::default()
    };

    let t0 = Instant::now();
    let c = compare::compare(&opts, &progress)?;
    let wall = t0.elapsed().as_secs_f64();
    print!("{}", c.table());
    for l in c.bench_lines() {
        println!("{l}");
    }
    println!(
        "bench: part=compare quick={quick} wall_s={wall:.2} units={} of {}",
        done.swap(0, Ordering::Relaxed),
        compare::work_units(&opts)
    );

    let t0 = Instant::now();
    let rows = latency::rows(quick, &progress)?;
    let wall = t0.elapsed().as_secs_f64();
    println!("\n{}", latency::table_header());
    for r in &rows {
        println!("{}", r.table_row());
    }
    for r in &rows {
        println!("{}", r.bench_line());
    }
    println!(
        "bench: part=latency quick={quick} wall_s={wall:.2} units={} of {}",
        done.swap(0, Ordering::Relaxed),
        latency::work_units(quick)
    );

    let t0 = Instant::now();
    let rows = speed::rows(quick, &progress)?;
    let wall = t0.elapsed().as_secs_f64();
    println!();
    for r in &rows {
        println!("{}", r.bench_line());
    }
    println!(
        "bench: part=speed quick={quick} wall_s={wall:.2} units={} of {}",
        done.swap(0, Ordering::Relaxed),
        speed::work_units()
    );
    Ok(())
}
