//! Replays every input kept under `fuzz/regressions/<target>/` through the
//! code path of that fuzz target (`fuzz/fuzz_targets/<target>.rs`: the
//! same decoding of the leading parameter bytes), on stable, as part of
//! `cargo test --workspace`.
//!
//! A file's name says how the whole path must end: `NAME.ok[.EXT]` (the
//! input is read to its end, and for logs replay accepts its rate and
//! bits) or `NAME.err[.EXT]` (refused, with a message that names the
//! input). Either way without a panic. See `fuzz/README.md`.

use std::io::{BufReader, Cursor, Read};
use std::path::{Path, PathBuf};

use humsim::configfile::{build, to_toml, ConfigFile, ConfigRequest};
use humsim::input::{CsvSource, FrameSource, RawFormat, RawSource, WavSource};
use humsim::scenario::{RenderOptions, Scenario};

/// At most `chunk` bytes a read (0: no limit), as the fuzz targets read.
struct Trickle {
    data: Cursor<Vec<u8>>,
    chunk: usize,
}

impl Read for Trickle {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = if self.chunk == 0 {
            buf.len()
        } else {
            buf.len().min(self.chunk)
        };
        self.data.read(&mut buf[..n])
    }
}

fn trickle(data: &[u8], chunk: usize) -> Trickle {
    Trickle {
        data: Cursor::new(data.to_vec()),
        chunk,
    }
}

/// Reads `src` to its end, then asks replay for a detector config for it.
fn read_all(mut src: Box<dyn FrameSource>, block: usize) -> Result<(), String> {
    let nch = src.channel_names().len();
    let mut buf = vec![0i32; block.max(1) * nch];
    for _ in 0..10_000_000 {
        if src.read(&mut buf)? == 0 {
            humsim::replay::config_for(src.as_ref(), None, None, None)?;
            return Ok(());
        }
    }
    panic!("{}: does not end", src.name());
}

/// The fuzz target `target` on `data`: `Ok` if everything accepted it,
/// the first refusal otherwise, with the name it must carry.
fn run(target: &str, data: &[u8]) -> (Result<(), String>, &'static str) {
    match target {
        "csv" => {
            let name = "fuzz.csv";
            let [a, b, text @ ..] = data else {
                return (Err(format!("{name}: too short")), name);
            };
            let bits = 7 + a % 11;
            let rate = match a >> 4 {
                0..=5 => None,
                6..=11 => Some(2_000.0),
                12 => Some(1e-300),
                13 => Some(1e300),
                _ => Some(f64::from(u32::from(*b) * 97 + 1)),
            };
            let chunk = usize::from(b & 0x0f);
            let block = 1 + usize::from(b >> 4) * 37;
            let reader = BufReader::with_capacity(8 + chunk * 13, trickle(text, chunk));
            let r = CsvSource::from_reader(name.into(), Box::new(reader), rate, bits)
                .and_then(|s| read_all(Box::new(s), block));
            (r, name)
        }
        "wav" => {
            let name = "fuzz.wav";
            let [a, wav @ ..] = data else {
                return (Err(format!("{name}: too short")), name);
            };
            let bits = match a % 16 {
                0..=3 => None,
                k => Some(k + 2),
            };
            let chunk = usize::from(a >> 4);
            let block = 1 + usize::from(a >> 4) * 61;
            let r = WavSource::from_reader(name.into(), Box::new(trickle(wav, chunk)), bits)
                .and_then(|s| read_all(Box::new(s), block));
            (r, name)
        }
        "raw" => {
            let name = "fuzz.raw";
            let [a, b, bytes @ ..] = data else {
                return (Err(format!("{name}: too short")), name);
            };
            let format = if a & 1 == 0 {
                RawFormat::U16Le
            } else {
                RawFormat::I16Le
            };
            let channels = usize::from(a >> 1) % 18;
            let bits = 7 + (b & 0x0f) % 11;
            let chunk = usize::from(b >> 4);
            let r = RawSource::from_reader(
                name.into(),
                Box::new(trickle(bytes, chunk)),
                format,
                channels,
                2_000.0,
                bits,
            )
            .and_then(|s| read_all(Box::new(s), 1 + usize::from(b >> 4) * 29));
            (r, name)
        }
        "scenario" => {
            let name = "fuzz.toml";
            let text = String::from_utf8_lossy(data);
            let r = Scenario::from_toml_str(&text, name)
                .and_then(|s| {
                    let mut r = s.render(&RenderOptions {
                        seconds: Some(0.02),
                        seed: Some(1),
                    })?;
                    let mut block = vec![0u16; 128 * r.channels()];
                    loop {
                        let n = r.fill(&mut block);
                        if n == 0 {
                            return Ok(());
                        }
                        let max = s.adc.max_code();
                        assert!(block[..n * r.channels()].iter().all(|&c| c <= max));
                    }
                })
                .map_err(|e| e.to_string());
            (r, name)
        }
        "labels" => {
            let name = "fuzz-labels.csv";
            let text = String::from_utf8_lossy(data);
            (
                humsim::labels::LabelFile::parse(&text, name).map(|_| ()),
                name,
            )
        }
        "configfile" => {
            let name = "fuzz.toml";
            let [a, rest @ ..] = data else {
                return (Err(format!("{name}: too short")), name);
            };
            let text = String::from_utf8_lossy(rest);
            let req = ConfigRequest {
                profile: None,
                mains: None,
                bits: 8 + a % 9,
                rate_hz: [400, 1_000, 2_000, 871, 50_000][usize::from(a >> 4) % 5],
            };
            let r = ConfigFile::parse(&text, name).and_then(|f| build(&req, Some(&f)));
            if let Ok(cfg) = &r {
                let again = ConfigFile::parse(&to_toml(cfg), "again.toml").unwrap();
                assert_eq!(build(&req, Some(&again)).as_ref(), Ok(cfg));
            }
            (r.map(|_| ()), name)
        }
        other => panic!("fuzz/regressions/{other}: no such fuzz target"),
    }
}

fn regressions() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../fuzz/regressions")
}

#[test]
fn every_kept_fuzz_input_ends_as_its_name_says() {
    let mut replayed = 0;
    for target in ["csv", "wav", "raw", "scenario", "labels", "configfile"] {
        let dir = regressions().join(target);
        let Ok(entries) = std::fs::read_dir(&dir) else {
            continue;
        };
        for entry in entries {
            let path = entry.unwrap().path();
            let file = path.file_name().unwrap().to_string_lossy().into_owned();
            let want_ok = if file.contains(".ok") {
                true
            } else if file.contains(".err") {
                false
            } else {
                panic!(
                    "{}: name it NAME.ok[.EXT] or NAME.err[.EXT]",
                    path.display()
                );
            };
            let data = std::fs::read(&path).unwrap();
            let (result, name) = run(target, &data);
            match result {
                Ok(()) => assert!(want_ok, "{target}/{file}: accepted, expected a refusal"),
                Err(e) => {
                    assert!(!want_ok, "{target}/{file}: refused: {e}");
                    assert!(e.starts_with(name), "{target}/{file}: {e}");
                }
            }
            replayed += 1;
        }
    }
    // The directory is found (a wrong path would pass vacuously).
    assert!(replayed >= 1, "no inputs under {}", regressions().display());
}

#[test]
fn a_wav_header_with_a_rate_of_zero_is_read_and_refused_by_replay() {
    // Found by the `wav` target: a header whose sample rate is 0 Hz. The
    // reader reports the rate as it is; replay must refuse it with a
    // message instead of running a detector at 0 Hz.
    let data = std::fs::read(regressions().join("wav/rate-zero-header.err.wav")).unwrap();
    let src = WavSource::from_reader(
        "zero.wav".into(),
        Box::new(Cursor::new(data[1..].to_vec())),
        Some(12),
    )
    .unwrap();
    assert_eq!(src.rate_hz(), 0.0);
    let e = humsim::replay::config_for(&src, None, None, None).unwrap_err();
    assert!(
        e.contains("zero.wav") && e.contains("sample rate 0 Hz"),
        "{e}"
    );
}
