//! temporary probe (not committed)
#![allow(clippy::all, missing_docs)]
use humsense::{Config, Detector};
use humsim::scenario::{LabelKind, RenderOptions, Scenario};

fn run<const N: usize>(cfg: Config, x: &[u16]) -> Vec<humsense::Event> {
    let mut d = Detector::<N, 0>::new(cfg).unwrap();
    let mut v = Vec::new();
    d.push_block(x, |e| v.push(e));
    v
}

#[test]
fn probe() {
    for name in humsim::builtin::names() {
        let sc = Scenario::builtin(name).unwrap();
        let secs = sc.file.duration_s.min(120.0);
        let mut r = sc
            .render(&RenderOptions {
                seconds: Some(secs),
                seed: None,
            })
            .unwrap();
        let ch = r.channels();
        let rate = r.rate_hz();
        let mut x = Vec::new();
        let mut buf = vec![0u16; 4096 * ch];
        loop {
            let n = r.fill(&mut buf);
            if n == 0 {
                break;
            }
            x.extend_from_slice(&buf[..n * ch]);
        }
        let labels = sc.labels(secs);
        let field = labels.iter().any(|l| l.kind == LabelKind::Field);
        let base = if field {
            Config::field()
        } else {
            Config::touch()
        };
        let cfg = base
            .with_sample_rate(rate as u32)
            .with_adc_bits(sc.adc.bits as u8);
        let ev = match ch {
            1 => run::<1>(cfg, &x),
            2 => run::<2>(cfg, &x),
            3 => run::<3>(cfg, &x),
            4 => run::<4>(cfg, &x),
            8 => run::<8>(cfg, &x),
            _ => run::<6>(cfg, &x),
        };
        println!(
            "== {name}: {ch} ch, {rate} Hz, {} bits, {secs} s, {} labels, {} samples",
            sc.adc.bits,
            labels.len(),
            x.len()
        );
        for l in &labels {
            println!(
                "   label {} {:?} {:.3}-{:.3}",
                l.channel, l.kind, l.start_s, l.end_s
            );
        }
        for e in &ev {
            println!(
                "   event ch{} {:?} at {:.4} amp {:.1} base {:.1}",
                e.channel,
                e.kind,
                e.sample as f64 / rate,
                e.amplitude_q8 as f64 / 256.0,
                e.baseline_q8 as f64 / 256.0
            );
        }
    }
}
