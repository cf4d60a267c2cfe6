//! `humsim replay`: round trips, agreement with the detector, the score of a
//! hand-made file, and every bad input.
#![allow(clippy::unwrap_used)]

#[path = "support/cli.rs"]
mod cli;
use cli::{p, run};
use humsense::{Config, Detector, Event};
use humsim::input::RenderSource;
use humsim::replay::replay;
use humsim::scenario::{RenderOptions, Scenario};
use std::path::{Path, PathBuf};

fn tmp(name: &str) -> PathBuf {
    cli::scratch("replay", name)
}

/// Rows of a replay output without the channel column (names differ
/// between CSV and WAV), with the channel's index instead.
fn rows_by_index(out: &str, names: &[&str]) -> Vec<String> {
    let mut lines = out.lines();
    assert_eq!(lines.next(), Some("time_s,channel,event,value"));
    lines
        .map(|l| {
            let c: Vec<&str> = l.split(',').collect();
            assert_eq!(c.len(), 4, "{l}");
            let idx = names
                .iter()
                .position(|n| *n == c[1])
                .or_else(|| c[1].strip_prefix("ch").and_then(|s| s.parse().ok()))
                .unwrap();
            format!("{},{idx},{},{}", c[0], c[2], c[3])
        })
        .collect()
}

#[test]
fn csv_and_wav_of_one_simulation_replay_to_identical_events() {
    let csv = tmp("rt.csv");
    let wav = tmp("rt.wav");
    for (out, extra) in [(&csv, Some("--time-column")), (&wav, None)] {
        let mut args = vec!["simulate", "kitchen-panel", "--seconds", "8", "-o", p(out)];
        args.extend(extra);
        let (code, _, err) = run(&args);
        assert_eq!(code, 0, "{err}");
    }
    let (code, a, err) = run(&["replay", p(&csv)]);
    assert_eq!(code, 0, "{err}");
    // The simulator stores 12-bit codes unchanged in 16-bit PCM.
    let (code, b, err) = run(&["replay", p(&wav), "--bits", "12"]);
    assert_eq!(code, 0, "{err}");
    let names = ["power", "minus", "plus", "timer"];
    let ra = rows_by_index(&a, &names);
    let rb = rows_by_index(&b, &names);
    // kitchen-panel's first 8 s hold four touches (2, 5, 6, 7 s): eight events.
    assert_eq!(ra.len(), 8, "{a}");
    assert_eq!(ra, rb);
    // The same CSV without its time column, with --rate: identical too.
    let text = std::fs::read_to_string(&csv).unwrap();
    let plain: String = text
        .lines()
        .map(|l| l.split_once(',').unwrap().1.to_string() + "\n")
        .collect();
    let plain_path = tmp("rt-plain.csv");
    std::fs::write(&plain_path, plain).unwrap();
    let (code, c, err) = run(&["replay", p(&plain_path), "--rate", "2000"]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(c, a);
    // And a raw u16le file of the same codes.
    let mut raw = Vec::new();
    for l in text.lines().skip(1) {
        for cell in l.split(',').skip(1) {
            raw.extend_from_slice(&cell.parse::<u16>().unwrap().to_le_bytes());
        }
    }
    let raw_path = tmp("rt.bin");
    std::fs::write(&raw_path, raw).unwrap();
    let (code, d, err) = run(&[
        "replay",
        p(&raw_path),
        "--raw",
        "u16le",
        "--channels",
        "4",
        "--rate",
        "2000",
    ]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(rows_by_index(&d, &names), ra);
}

#[test]
fn replay_equals_the_detector_itself() {
    let s = Scenario::builtin("kitchen-panel").unwrap();
    let opts = RenderOptions {
        seconds: Some(10.0),
        seed: None,
    };
    // The detector as firmware uses it: interleaved blocks into push_block.
    let mut r = s.render(&opts).unwrap();
    let mut det: Detector<4> = Detector::new(Config::touch()).unwrap();
    let mut want: Vec<Event> = Vec::new();
    let mut block = vec![0u16; 1000];
    loop {
        let n = r.fill(&mut block);
        if n == 0 {
            break;
        }
        det.push_block(&block[..n * 4], |e| want.push(e));
    }
    let mut src = RenderSource::new(s.render(&opts).unwrap());
    let got = replay(&mut src, &Config::touch(), &mut |_| Ok(()), None, true).unwrap();
    assert_eq!(got.frames, 20_000);
    // Touches at 2, 5, 6, 7 s and one from 9 s still held at 10 s.
    assert_eq!(want.len(), 9);
    assert_eq!(got.events, want);
}

/// 50 Hz at 2 kHz, 12-bit around 2048: 20 codes of hum, 400 while touched.
fn three_touch_csv(path: &Path) {
    let touches = [(1.0, 1.5), (2.0, 2.3), (3.0, 3.6)];
    let mut s = String::from("time_s,pad\n");
    for n in 0..8000u32 {
        let t = f64::from(n) / 2000.0;
        let a = if touches.iter().any(|&(a, b)| t >= a && t < b) {
            400.0
        } else {
            20.0
        };
        let x = 2048.0 + a * (std::f64::consts::TAU * 50.0 * t).sin();
        s.push_str(&format!("{t:.4},{}\n", x.round() as i64));
    }
    std::fs::write(path, s).unwrap();
}

#[test]
fn three_touch_file_scores_as_worked_by_hand() {
    let input = tmp("three.csv");
    three_touch_csv(&input);
    let labels = tmp("three.labels.csv");
    std::fs::write(
        &labels,
        "channel,kind,start_s,end_s\npad,touch,1.0,1.5\npad,touch,2.0,2.3\npad,touch,3.0,3.6\n",
    )
    .unwrap();
    let out = tmp("three.events.csv");
    let (code, stdout, err) = run(&[
        "replay",
        p(&input),
        "--labels",
        p(&labels),
        "--out",
        p(&out),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(stdout.is_empty());
    let text = std::fs::read_to_string(&out).unwrap();
    let rows: Vec<Vec<String>> = text
        .lines()
        .skip(1)
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect();
    let kinds: Vec<&str> = rows.iter().map(|r| r[2].as_str()).collect();
    assert_eq!(
        kinds,
        [
            "touch-on",
            "touch-off",
            "touch-on",
            "touch-off",
            "touch-on",
            "touch-off"
        ],
        "{text}"
    );
    // Worked by hand (touch defaults; 20 → 400 codes, 20 ms cycles). On: a
    // cycle whose share f of the step lifts it above 2.8x counts once,
    // above 4.6x (twice the excess) it confirms alone if its mean did not
    // move; debounce_on = 2. A share f reads about 20·(1 + 19f), so the on
    // event ends the 1st cycle boundary after the step when f > 0.19 there
    // (from about 4 ms), at the latest the 3rd (60 ms). Off: a fall below a
    // sixth of the touch's own level (67 codes: a released share above
    // 0.88) confirms alone, so the off event ends the cycle the release
    // falls in if it began in its first 2.5 ms (17.5 to 20 ms), else the
    // next one (20 to 37.5 ms). A partly covered cycle's amplitude is only
    // about proportional to its share: a few ms either way.
    let starts = [1.0, 2.0, 3.0];
    let ends = [1.5, 2.3, 3.6];
    for k in 0..3 {
        let on: f64 = rows[2 * k][0].parse().unwrap();
        let off: f64 = rows[2 * k + 1][0].parse().unwrap();
        let lat_on = (on - starts[k]) * 1000.0;
        let lat_off = (off - ends[k]) * 1000.0;
        assert!((3.0..=60.0).contains(&lat_on), "on latency {lat_on} ms");
        assert!((15.0..=40.0).contains(&lat_off), "off latency {lat_off} ms");
        // Strength: 20·log10(400/20) ≈ 26 dB for a fully touched cycle.
        let db: f64 = rows[2 * k][3].parse().unwrap();
        assert!((15.0..=27.0).contains(&db), "{db} dB");
        // time_s = sample index / rate, 6 decimals: a whole sample at 2 kHz.
        assert_eq!(rows[2 * k][0].split('.').nth(1).unwrap().len(), 6);
        assert!(((on * 2000.0) - (on * 2000.0).round()).abs() < 1e-6);
    }
    // The score on stderr: 3 labels, 3 detected, 0 missed, 0 false.
    let all = err.lines().find(|l| l.starts_with("all ")).unwrap();
    let cells: Vec<&str> = all.split_whitespace().collect();
    assert_eq!(&cells[1..6], ["3", "3", "0", "0", "0"], "{err}");
}

#[test]
fn replay_plot_is_a_png() {
    let input = tmp("plot.csv");
    three_touch_csv(&input);
    let png = tmp("plot.png");
    let (code, out, err) = run(&["replay", p(&input), "--plot", p(&png)]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(out.lines().count(), 7);
    assert!(err.contains("plot: "));
    assert_eq!(&std::fs::read(&png).unwrap()[..4], b"\x89PNG");
}

fn bad(name: &str, content: &[u8], extra: &[&str], want: &[&str]) {
    let path = tmp(name);
    std::fs::write(&path, content).unwrap();
    let mut args = vec!["replay", p(&path)];
    args.extend_from_slice(extra);
    let (code, _, err) = run(&args);
    assert_eq!(code, 1, "{name}: {err}");
    for w in want {
        let w = w.replace("{F}", p(&path));
        assert!(err.contains(&w), "{name}: expected `{w}` in: {err}");
    }
    assert!(!err.contains("panicked"), "{err}");
}

#[test]
fn bad_csv_inputs_are_located() {
    bad("empty.csv", b"", &["--rate", "2000"], &["{F}: empty file"]);
    bad(
        "header-only.csv",
        b"a,b\n",
        &["--rate", "2000"],
        &["{F}: no data rows"],
    );
    bad(
        "ragged.csv",
        b"a,b\n1,2\n3\n",
        &["--rate", "2000"],
        &["{F}:3:2: expected 2 cells as in the header, found 1"],
    );
    bad(
        "long.csv",
        b"a,b\n1,2\n3,4,5\n",
        &["--rate", "2000"],
        &["{F}:3:5: expected 2 cells as in the header, found more"],
    );
    bad(
        "float.csv",
        b"a,b\n1,2\n3,4.5\n",
        &["--rate", "2000"],
        &["{F}:3:3: column `b`: `4.5` is not an integer ADC code"],
    );
    bad(
        "range.csv",
        b"a\n4095\n4096\n",
        &["--rate", "2000"],
        &["{F}:3:1: column `a`: 4096 is out of range for 12-bit codes (0 to 4095)"],
    );
    bad(
        "range10.csv",
        b"a\n1024\n",
        &["--rate", "2000", "--bits", "10"],
        &["{F}:2:1: column `a`: 1024 is out of range for 10-bit codes (0 to 1023)"],
    );
    bad(
        "negative.csv",
        b"a\n-1\n",
        &["--rate", "2000"],
        &["{F}:2:1: column `a`: -1 is out of range"],
    );
    bad(
        "norate.csv",
        b"a\n1\n",
        &[],
        &["{F}: no time_s column", "--rate"],
    );
    // time_s: 2 kHz, then one interval of 1 ms at line 6.
    bad(
        "jitter.csv",
        b"time_s,a\n0.0000,1\n0.0005,1\n0.0010,1\n0.0015,1\n0.0025,1\n0.0030,1\n",
        &[],
        &[
            "{F}:6:1: column `time_s`: a gap of 0.001000000 s from line 5 (0.0015 s) to line 6 \
             (0.0025 s): about 1 missing sample(s) at 2000.000 Hz",
        ],
    );
    bad(
        "badtime.csv",
        b"time_s,a\n0.0,1\nsoon,1\n",
        &[],
        &["{F}:3:1: column `time_s`: `soon` is not a time"],
    );
    bad(
        "disagree.csv",
        b"time_s,a\n0.0,1\n0.001,1\n0.002,1\n",
        &["--rate", "2000"],
        &["--rate 2000 disagrees with time_s, which gives 1000.000 Hz"],
    );
    bad(
        "numheader.csv",
        b"2048,2050\n2049,2051\n",
        &["--rate", "2000"],
        &["{F}:1:1: header cell `2048` is a number"],
    );
    bad(
        "dup.csv",
        b"a,a\n1,2\n",
        &["--rate", "2000"],
        &["{F}:1:3: column `a` appears twice"],
    );
    let wide: String = (0..17)
        .map(|i| format!("c{i}"))
        .collect::<Vec<_>>()
        .join(",");
    let row: String = vec!["1"; 17].join(",");
    bad(
        "wide.csv",
        format!("{wide}\n{row}\n").as_bytes(),
        &["--rate", "2000"],
        &["{F}:1:55: more than 16 channel columns in the header; replay handles 1 to 16"],
    );
    bad(
        "missing.csv",
        b"",
        &["--rate", "2000", "--bits", "20"],
        &["--bits 20: expected 8 to 16"],
    );
}

fn wav_bytes(channels: u16, bits: u16, samples: &[i32]) -> Vec<u8> {
    let path = tmp(&format!("tmp-{channels}-{bits}-{}.wav", samples.len()));
    let spec = hound::WavSpec {
        channels,
        sample_rate: 2000,
        bits_per_sample: bits,
        sample_format: hound::SampleFormat::Int,
    };
    let mut w = hound::WavWriter::create(&path, spec).unwrap();
    for &s in samples {
        w.write_sample(s).unwrap();
    }
    w.finalize().unwrap();
    std::fs::read(&path).unwrap()
}

/// A WAVE_FORMAT_EXTENSIBLE file of one channel at 2 kHz: `valid` bits in
/// 16-bit containers, the container values as given (the layout from
/// Microsoft's WAVEFORMATEXTENSIBLE documentation, from memory: a 40-byte
/// `fmt ` chunk, format tag 0xFFFE, then cbSize 22, valid bits, channel
/// mask and the PCM sub-format GUID).
fn extensible_wav(valid: u16, containers: &[i16]) -> Vec<u8> {
    let mut fmt = Vec::new();
    fmt.extend_from_slice(&0xFFFEu16.to_le_bytes());
    fmt.extend_from_slice(&1u16.to_le_bytes());
    fmt.extend_from_slice(&2000u32.to_le_bytes());
    fmt.extend_from_slice(&4000u32.to_le_bytes());
    fmt.extend_from_slice(&2u16.to_le_bytes());
    fmt.extend_from_slice(&16u16.to_le_bytes());
    fmt.extend_from_slice(&22u16.to_le_bytes());
    fmt.extend_from_slice(&valid.to_le_bytes());
    fmt.extend_from_slice(&4u32.to_le_bytes());
    fmt.extend_from_slice(&[
        0x01, 0x00, 0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xaa, 0x00, 0x38, 0x9b,
        0x71,
    ]);
    let data: Vec<u8> = containers.iter().flat_map(|v| v.to_le_bytes()).collect();
    let mut out = b"RIFF".to_vec();
    out.extend_from_slice(&((4 + 8 + fmt.len() + 8 + data.len()) as u32).to_le_bytes());
    out.extend_from_slice(b"WAVEfmt ");
    out.extend_from_slice(&(fmt.len() as u32).to_le_bytes());
    out.extend_from_slice(&fmt);
    out.extend_from_slice(b"data");
    out.extend_from_slice(&(data.len() as u32).to_le_bytes());
    out.extend_from_slice(&data);
    out
}

#[test]
fn an_extensible_wav_with_fewer_valid_bits_is_read() {
    // 4 s of 50 Hz hum with touches, as signed 12-bit codes.
    let codes: Vec<i32> = (0..8000u32)
        .map(|n| {
            let t = f64::from(n) / 2000.0;
            let a = if (1.0..1.5).contains(&t) || (2.5..3.0).contains(&t) {
                400.0
            } else {
                20.0
            };
            (a * (std::f64::consts::TAU * 50.0 * t).sin()).round() as i32
        })
        .collect();
    // Left-justified in 16 bits, the low 4 bits zero.
    let containers: Vec<i16> = codes.iter().map(|&c| (c << 4) as i16).collect();
    let wav = tmp("ext12.wav");
    std::fs::write(&wav, extensible_wav(12, &containers)).unwrap();
    // The same codes as unsigned 12-bit CSV (offset binary: + 2048).
    let csv = tmp("ext12.csv");
    let mut text = String::from("ch0\n");
    for c in &codes {
        text.push_str(&format!("{}\n", c + 2048));
    }
    std::fs::write(&csv, text).unwrap();
    let (code, from_wav, err) = run(&["replay", p(&wav)]);
    assert_eq!(code, 0, "{err}");
    let (code, from_csv, err) = run(&["replay", p(&csv), "--rate", "2000"]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(from_wav.matches("touch-on").count(), 2, "{from_wav}");
    // Offset binary and two's complement are the same codes to the
    // detector: the same events.
    assert_eq!(from_wav, from_csv);
    // Padding bits that are not zero: refused, naming the frame.
    let mut bad_pad = containers.clone();
    bad_pad[3] |= 1;
    let wav = tmp("ext12-pad.wav");
    std::fs::write(&wav, extensible_wav(12, &bad_pad)).unwrap();
    let (code, _, err) = run(&["replay", p(&wav)]);
    assert_eq!(code, 1);
    assert!(
        err.contains("frame 3, channel ch0: container value")
            && err.contains("nonzero padding bits below its 12 valid bits"),
        "{err}"
    );
}

#[test]
fn bad_wav_and_raw_inputs_are_reported() {
    let good = wav_bytes(2, 16, &[1, 2, 3, 4, 5, 6, 7, 8]);
    // Cut inside the data: the header still declares 8 samples.
    bad(
        "trunc.wav",
        &good[..good.len() - 5],
        &[],
        &["{F}: truncated WAV"],
    );
    bad(
        "head.wav",
        &good[..20],
        &[],
        &["{F}: truncated WAV: the file ends inside its header"],
    );
    bad(
        "junk.wav",
        b"not a wav file at all",
        &[],
        &["{F}: not a readable WAV file"],
    );
    bad(
        "unsigned.wav",
        &wav_bytes(1, 16, &[100, 5000]),
        &["--bits", "12"],
        &["{F}: frame 1, channel ch0: sample 5000 is out of range for 12-bit unsigned"],
    );
    bad(
        "wide.wav",
        &wav_bytes(1, 24, &[1, 2]),
        &[],
        &["{F}: 24-bit PCM", "--bits"],
    );
    bad(
        "rate.wav",
        &good,
        &["--rate", "1000"],
        &["{F}: --rate does not apply to WAV"],
    );
    bad(
        "trunc.bin",
        &[1, 0, 2, 0, 3],
        &["--raw", "u16le", "--channels", "2", "--rate", "2000"],
        &["{F}: truncated: 1 trailing bytes at byte offset 4"],
    );
    bad(
        "empty.bin",
        b"",
        &["--raw", "i16le", "--channels", "1", "--rate", "2000"],
        &["{F}: empty file"],
    );
    bad(
        "range.bin",
        &[0, 0, 0, 16],
        &["--raw", "u16le", "--channels", "1", "--rate", "2000"],
        &["{F}: frame 1, channel ch0 (byte offset 2): code 4096 is out of range for 12-bit"],
    );
    bad(
        "norate.bin",
        &[0, 0],
        &["--raw", "u16le", "--channels", "1"],
        &["--raw needs --rate"],
    );
    bad(
        "noch.bin",
        &[0, 0],
        &["--raw", "u16le", "--rate", "2000"],
        &["--raw needs --channels"],
    );
    let (code, _, err) = run(&["replay", "/nonexistent/x.csv", "--rate", "2000"]);
    assert_eq!(code, 1);
    assert!(err.contains("/nonexistent/x.csv: cannot open"), "{err}");
}

#[test]
fn config_files_and_labels_are_checked() {
    let input = tmp("cfg-in.csv");
    three_touch_csv(&input);
    let cfg = tmp("bad.toml");
    std::fs::write(&cfg, "on_ratio = 3.0\nbogus_key = 1\n").unwrap();
    let (code, _, err) = run(&["replay", p(&input), "--config", p(&cfg)]);
    assert_eq!(code, 1);
    assert!(
        err.contains(&format!("{}:2:1: unknown field `bogus_key`", p(&cfg))),
        "{err}"
    );
    std::fs::write(&cfg, "# comment\noff_ratio = 3.5\n").unwrap();
    let (code, _, err) = run(&["replay", p(&input), "--config", p(&cfg)]);
    assert_eq!(code, 1);
    assert!(
        err.contains(&format!(
            "{}:2:1: config field `off_ratio` must be below `on_ratio`",
            p(&cfg)
        )),
        "{err}"
    );
    std::fs::write(&cfg, "sample_rate_hz = 1000\n").unwrap();
    let (code, _, err) = run(&["replay", p(&input), "--config", p(&cfg)]);
    assert_eq!(code, 1);
    assert!(
        err.contains("sample_rate_hz = 1000, but the input is sampled at 2000 Hz"),
        "{err}"
    );
    std::fs::write(&cfg, "debounce_on = 300\n").unwrap();
    let (code, _, err) = run(&["replay", p(&input), "--config", p(&cfg)]);
    assert_eq!(code, 1);
    assert!(
        err.contains(&format!(
            "{}:1:1: config field `debounce_on` is 300, expected a value from 1 to 255",
            p(&cfg)
        )),
        "{err}"
    );
    // A valid one changes the result: on_ratio 30 is above a 20x touch.
    std::fs::write(&cfg, "on_ratio = 30.0\noff_ratio = 10.0\non_noise = 8\n").unwrap();
    let (code, out, err) = run(&["replay", p(&input), "--config", p(&cfg)]);
    assert_eq!(code, 0, "{err}");
    assert_eq!(out, "time_s,channel,event,value\n");

    let labels = tmp("bad.labels.csv");
    std::fs::write(&labels, "channel,kind,start_s,end_s\nknob,touch,1,2\n").unwrap();
    let out = tmp("labels-out.csv");
    let (code, _, err) = run(&[
        "replay",
        p(&input),
        "--labels",
        p(&labels),
        "--out",
        p(&out),
    ]);
    assert_eq!(code, 1);
    assert!(
        err.contains("labels.csv:2: label `knob,touch,1,2` is for channel `knob`")
            && err.contains("its channels are: pad"),
        "{err}"
    );
    std::fs::write(&labels, "channel,kind,start_s,end_s\npad,touch,1,9.5\n").unwrap();
    let (code, _, err) = run(&[
        "replay",
        p(&input),
        "--labels",
        p(&labels),
        "--out",
        p(&out),
    ]);
    assert_eq!(code, 1);
    assert!(
        err.contains("ends after the input, which lasts 4.0000 s"),
        "{err}"
    );
    // A failed run leaves no partial output file behind.
    assert!(!out.exists());
}

/// `time_s` rows at 2 kHz from `t0`, four decimals, then `tail` rows as
/// written.
fn timed(t0: f64, rows: u32, tail: &str) -> Vec<u8> {
    let mut s = String::from("time_s,a\n");
    for n in 0..rows {
        s.push_str(&format!("{:.4},2048\n", t0 + f64::from(n) / 2000.0));
    }
    s.push_str(tail);
    s.into_bytes()
}

#[test]
fn time_gaps_are_judged_from_the_values_not_their_printed_decimals() {
    // 0.9995 s then `1.1`: one decimal used to widen the tolerance to 0.1 s
    // and hide a 0.1 s gap. Line 2001 holds 0.9995 (header on line 1).
    bad(
        "one-decimal.csv",
        &timed(0.0, 2000, "1.1,2048\n1.1005,2048\n"),
        &[],
        &[
            "{F}:2002:1: column `time_s`: a gap of 0.100500000 s from line 2001 (0.9995 s) to \
           line 2002 (1.1 s): about 200 missing sample(s)",
        ],
    );
    // A whole `2`: a gap of about a second.
    bad(
        "whole.csv",
        &timed(0.0, 2000, "2,2048\n"),
        &[],
        &[
            "{F}:2002:1: column `time_s`: a gap of 1.000500000 s from line 2001",
            "about 2000 missing",
        ],
    );
    // A repeated row.
    bad(
        "repeat.csv",
        &timed(0.0, 10, "0.0045,2048\n"),
        &[],
        &["{F}:12:1: column `time_s`: 0.0045 s does not come after 0.0045 s on line 11"],
    );
    // Times printed too coarsely to resolve the period: refused, saying so.
    bad(
        "coarse.csv",
        b"time_s,a\n0.000,1\n0.001,1\n0.001,1\n0.002,1\n0.002,1\n0.003,1\n0.003,1\n",
        &[],
        &[
            "{F}:4:1: column `time_s`: 0.001 s does not come after 0.001 s on line 3",
            "too few to resolve a period",
        ],
    );
    // One gap among the first rows does not bend the inferred rate: it is
    // reported as a gap at 2 kHz.
    let mut rows = String::from("time_s,a\n");
    for n in (0..50u32).chain(60..120) {
        rows.push_str(&format!("{:.4},2048\n", f64::from(n) / 2000.0));
    }
    bad(
        "early-gap.csv",
        rows.as_bytes(),
        &[],
        &[
            "{F}:52:1: column `time_s`: a gap of 0.005500000 s from line 51",
            "about 10 missing sample(s) at 2000.000 Hz",
        ],
    );
    // Rounding of printed times at a rate they cannot hold exactly (3 kHz
    // at 4 decimals: intervals of 0.0003 and 0.0004 s) is fine.
    let mut rows = String::from("time_s,a\n");
    for n in 0..6000u32 {
        let t = f64::from(n) / 3000.0;
        let x = 2048.0 + 20.0 * (std::f64::consts::TAU * 50.0 * t).sin();
        rows.push_str(&format!("{t:.4},{}\n", x.round()));
    }
    let path = tmp("rounded.csv");
    std::fs::write(&path, rows).unwrap();
    let (code, _, err) = run(&["replay", p(&path)]);
    assert_eq!(code, 0, "{err}");
}

#[test]
fn a_log_that_starts_at_100_s_is_reported_on_its_own_clock() {
    let touches = [(101.0, 101.5), (102.0, 102.3), (103.0, 103.6)];
    let mut s = String::from("time_s,pad\n");
    for n in 0..8000u32 {
        let t = 100.0 + f64::from(n) / 2000.0;
        let a = if touches.iter().any(|&(a, b)| t >= a && t < b) {
            400.0
        } else {
            20.0
        };
        let x = 2048.0 + a * (std::f64::consts::TAU * 50.0 * t).sin();
        s.push_str(&format!("{t:.4},{}\n", x.round() as i64));
    }
    let input = tmp("late-start.csv");
    std::fs::write(&input, s).unwrap();
    let labels = tmp("late-start.labels.csv");
    std::fs::write(
        &labels,
        "channel,kind,start_s,end_s\npad,touch,101,101.5\npad,touch,102,102.3\npad,touch,103,103.6\n",
    )
    .unwrap();
    let (code, out, err) = run(&["replay", p(&input), "--labels", p(&labels)]);
    assert_eq!(code, 0, "{err}");
    let ons: Vec<f64> = out
        .lines()
        .filter(|l| l.contains("touch-on"))
        .map(|l| l.split(',').next().unwrap().parse().unwrap())
        .collect();
    assert_eq!(ons.len(), 3, "{out}");
    // Each on event within 100 ms after its label's start, on the log's
    // clock (DESIGN.md's p95 bar; the detector needs one to three cycles).
    for (t, (a, _)) in ons.iter().zip(touches) {
        assert!(*t > a && *t < a + 0.1, "{t} against {a}: {out}");
    }
    // The score's row: 3 labels, 3 detected, 0 missed, 0 false.
    let row: Vec<&str> = err
        .lines()
        .find(|l| l.starts_with("pad "))
        .map(|l| l.split_whitespace().take(5).collect())
        .unwrap_or_default();
    assert_eq!(row, ["pad", "3", "3", "0", "0"], "{err}");
    // Labels on a clock from 0 are refused, naming the log's start.
    std::fs::write(&labels, "channel,kind,start_s,end_s\npad,touch,1,1.5\n").unwrap();
    let (code, _, err) = run(&["replay", p(&input), "--labels", p(&labels)]);
    assert_eq!(code, 1);
    assert!(
        err.contains("starts before the input, which starts at 100 s"),
        "{err}"
    );
    std::fs::write(&labels, "channel,kind,start_s,end_s\npad,touch,103,105\n").unwrap();
    let (code, _, err) = run(&["replay", p(&input), "--labels", p(&labels)]);
    assert_eq!(code, 1);
    assert!(
        err.contains("ends after the input, which lasts 4.0000 s (from 100 s to 104.0000 s"),
        "{err}"
    );
}

#[test]
fn hostile_csv_is_refused_early_and_quoted_short() {
    // 5 000 channel names (a 29 kB header): refused at the 17th, not after
    // a quadratic check of all of them. (200 000 names exceed the line
    // limit, checked below.)
    let names: Vec<String> = (0..5_000).map(|i| format!("c{i}")).collect();
    let mut header = names.join(",");
    header.push_str("\n1\n");
    bad(
        "wide.csv",
        header.as_bytes(),
        &["--rate", "2000"],
        // c0..c15 take 2+2*... columns: c16 starts after "c0,".."c9," (3 bytes
        // each) and "c10,".."c15," (4 each): 30 + 24 + 1 = column 55.
        &["{F}:1:55: more than 16 channel columns in the header; replay handles 1 to 16"],
    );
    // A header line of 1 MB with no line end: refused at the line limit.
    let mut long = vec![b'a'; 1 << 20];
    long.extend_from_slice(b"\n1\n");
    bad(
        "long-line.csv",
        &long,
        &["--rate", "2000"],
        &["{F}:1: line longer than 65536 bytes, the limit for one line"],
    );
    // A 60 000-byte cell is quoted cut, with its length.
    let mut row = b"a\n".to_vec();
    row.extend(std::iter::repeat_n(b'x', 60_000));
    row.push(b'\n');
    let path = tmp("huge-cell.csv");
    std::fs::write(&path, &row).unwrap();
    let (code, _, err) = run(&["replay", p(&path), "--rate", "2000"]);
    assert_eq!(code, 1);
    assert!(
        err.contains(&format!(
            "{}:2:1: column `a`: `{}… (60000 bytes in all)` is not an integer ADC code",
            p(&path),
            "x".repeat(40)
        )),
        "{err}"
    );
    assert!(err.len() < 400, "{} bytes of message", err.len());
    // CR-only line ends are named as such.
    bad(
        "cr-only.csv",
        b"a,b\r1,2\r3,4\r",
        &["--rate", "2000"],
        &[
            "{F}:1: the first line holds carriage returns (CR)",
            "CR-only line ends",
        ],
    );
    let labels = tmp("cr-only.labels.csv");
    std::fs::write(&labels, b"channel,kind,start_s,end_s\rpad,touch,1,2\r").unwrap();
    let input = tmp("for-cr-labels.csv");
    std::fs::write(&input, b"pad\n2048\n2048\n").unwrap();
    let (code, _, err) = run(&[
        "replay",
        p(&input),
        "--rate",
        "2000",
        "--labels",
        p(&labels),
    ]);
    assert_eq!(code, 1);
    assert!(err.contains("CR-only line ends"), "{err}");
    // A NUL inside a cell is shown, not dropped.
    bad(
        "nul.csv",
        b"a\n20\x0048\n",
        &["--rate", "2000"],
        &["{F}:2:1: column `a`: `20\\048` is not an integer ADC code"],
    );
}

#[test]
fn every_channel_count_up_to_sixteen_replays() {
    // 1 s of steady 50 Hz hum (40 codes) on every channel, and a 20x rise on
    // the last channel from 0.6 s: one touch-on there, whatever the width.
    for n in [1usize, 5, 9, 16] {
        let mut s: String = (0..n)
            .map(|i| format!("c{i}"))
            .collect::<Vec<_>>()
            .join(",");
        s.push('\n');
        for k in 0..2000u32 {
            let t = f64::from(k) / 2000.0;
            let w = (std::f64::consts::TAU * 50.0 * t).sin();
            let row: Vec<String> = (0..n)
                .map(|i| {
                    let a = if i == n - 1 && t >= 0.6 { 800.0 } else { 40.0 };
                    format!("{}", (2048.0 + a * w).round() as i64)
                })
                .collect();
            s.push_str(&row.join(","));
            s.push('\n');
        }
        let path = tmp(&format!("wide{n}.csv"));
        std::fs::write(&path, s).unwrap();
        let (code, out, err) = run(&["replay", p(&path), "--rate", "2000"]);
        assert_eq!(code, 0, "{n}: {err}");
        let rows: Vec<&str> = out.lines().skip(1).collect();
        assert_eq!(rows.len(), 1, "{n}: {out}");
        assert!(
            rows[0].contains(&format!(",c{},touch-on,", n - 1)),
            "{n}: {out}"
        );
    }
}
