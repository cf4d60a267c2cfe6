//! Pictures of a run (PNG), drawn with no system libraries: plotters'
//! bitmap backend with DejaVu Sans embedded (`assets/`, licence beside it)
//! and rasterised in pure Rust.
//!
//! [`PlotRecorder`] collects a run in bounded memory whatever its length:
//! each series keeps at most [`MAX_BUCKETS`] buckets, and when it fills,
//! neighbouring buckets merge and the bucket width doubles. A bucket keeps
//! the minimum, maximum and last value of what fell into it. Per channel
//! the picture has two panels on one time axis (seconds):
//! - the ADC signal (codes): a line while undecimated, otherwise the
//!   min-to-max envelope of each bucket;
//! - the per-cycle hum amplitude (peak per bucket) with the baseline and the
//!   on and off thresholds (each bucket's last value), in ADC codes on a
//!   logarithmic axis, ground-truth intervals shaded, and the events
//!   marked as vertical lines (on, off, fault).
//!
//! For an edge or polled-level log ([`PlotRecorder::digital`]) the first
//! panel is the pin level (0 or 1) and the second the amplitude the edge
//! front end measured from each mains cycle's duty, with the baseline and
//! thresholds, in threshold units (`A/Vt`; the core's 64 codes per `Vt`
//! divided out).

use crate::labels::Label;
use humsense::{ChannelSnapshot, Event, EventKind};
use plotters::coord::Shift;
use plotters::prelude::*;
use std::io::Write;

/// Most buckets a series keeps.
pub const MAX_BUCKETS: usize = 2048;
/// Most events a picture marks (later ones are counted, not drawn).
pub const MAX_EVENTS: usize = 20_000;

static FONT: &[u8] = include_bytes!("../assets/DejaVuSans.ttf");

#[derive(Clone, Copy, Debug)]
struct Bucket<const K: usize> {
    x0: u64,
    min: [f32; K],
    max: [f32; K],
    last: [f32; K],
}

#[derive(Clone, Debug)]
struct Series<const K: usize> {
    width: u64,
    items: Vec<Bucket<K>>,
}

impl<const K: usize> Series<K> {
    fn new() -> Self {
        Series {
            width: 1,
            items: Vec::new(),
        }
    }

    fn push(&mut self, x: u64, v: [f32; K]) {
        if let Some(b) = self.items.last_mut() {
            if x < b.x0 + self.width {
                for (k, x) in v.iter().enumerate() {
                    b.min[k] = b.min[k].min(*x);
                    b.max[k] = b.max[k].max(*x);
                }
                b.last = v;
                return;
            }
        }
        self.items.push(Bucket {
            x0: x - x % self.width,
            min: v,
            max: v,
            last: v,
        });
        if self.items.len() > MAX_BUCKETS {
            self.compact();
        }
    }

    fn compact(&mut self) {
        self.width *= 2;
        let w = self.width;
        let mut out: Vec<Bucket<K>> = Vec::with_capacity(MAX_BUCKETS / 2 + 1);
        for b in self.items.drain(..) {
            let x0 = b.x0 - b.x0 % w;
            match out.last_mut() {
                Some(a) if a.x0 == x0 => {
                    for k in 0..K {
                        a.min[k] = a.min[k].min(b.min[k]);
                        a.max[k] = a.max[k].max(b.max[k]);
                    }
                    a.last = b.last;
                }
                _ => out.push(Bucket { x0, ..b }),
            }
        }
        self.items = out;
    }
}

/// A run recorded for a picture, in bounded memory.
#[derive(Clone, Debug)]
pub struct PlotRecorder {
    names: Vec<String>,
    rate_hz: f64,
    start_s: f64,
    raw: Vec<Series<1>>,
    cycles: Vec<Series<4>>,
    events: Vec<(u64, u8, EventKind)>,
    dropped: usize,
    frames: u64,
    digital: bool,
}

impl PlotRecorder {
    /// A recorder for channels `names` sampled at `rate_hz`.
    pub fn new(names: &[String], rate_hz: f64) -> PlotRecorder {
        PlotRecorder {
            names: names.to_vec(),
            rate_hz,
            start_s: 0.0,
            raw: vec![Series::new(); names.len()],
            cycles: vec![Series::new(); names.len()],
            events: Vec::new(),
            dropped: 0,
            frames: 0,
            digital: false,
        }
    }

    /// The same recorder for an edge or polled-level log: pin levels, and
    /// amplitudes in threshold units (see the module docs).
    pub fn digital(mut self) -> PlotRecorder {
        self.digital = true;
        self
    }

    /// The same recorder with its time axis on a log's own clock: frame 0
    /// at `start_s` seconds (labels are drawn on that clock too).
    pub fn starting_at(mut self, start_s: f64) -> PlotRecorder {
        self.start_s = start_s;
        self
    }

    /// Records one frame of codes.
    pub fn frame(&mut self, index: u64, codes: &[i32]) {
        for (s, &c) in self.raw.iter_mut().zip(codes) {
            s.push(index, [c as f32]);
        }
        self.frames = index + 1;
    }

    /// Records channel `ch`'s state after the cycle that ended at sample
    /// `end_sample`.
    pub fn cycle(&mut self, end_sample: u64, ch: usize, s: &ChannelSnapshot) {
        let unit = if self.digital {
            (humsense::edge::UNIT_Q8 / 256) as f32
        } else {
            1.0
        };
        if let Some(series) = self.cycles.get_mut(ch) {
            let q8 = |v: u32| v as f32 / 256.0 / unit;
            series.push(
                end_sample,
                [
                    q8(s.amplitude_q8),
                    q8(s.baseline_q8),
                    q8(s.on_q8),
                    q8(s.off_q8),
                ],
            );
        }
    }

    /// Records an event.
    pub fn event(&mut self, e: &Event) {
        if self.events.len() < MAX_EVENTS {
            self.events.push((e.sample, e.channel, e.kind));
        } else {
            self.dropped += 1;
        }
    }

    /// Writes the picture to `path` (PNG; `name` is how messages call it).
    /// `title` heads it; `labels`, if any, are shaded on the amplitude
    /// panels.
    pub fn write_png(
        &self,
        out: &mut dyn Write,
        name: &str,
        title: &str,
        labels: &[Label],
    ) -> Result<(), String> {
        register_font()?;
        let n = self.names.len().max(1);
        let (w, h) = (1400u32, 80 + 450 * n as u32);
        let err = |e: String| format!("{name}: cannot draw the plot: {e}");
        let mut rgb = vec![0u8; w as usize * h as usize * 3];
        {
            let root = BitMapBackend::with_buffer(&mut rgb, (w, h)).into_drawing_area();
            root.fill(&WHITE).map_err(|e| err(e.to_string()))?;
            let (head, body) = root.split_vertically(70);
            let mut t = title.to_string();
            if self.dropped > 0 {
                t.push_str(&format!(" ({} more events not marked)", self.dropped));
            }
            head.draw_text(&t, &("sans-serif", 24).into_font().color(&BLACK), (20, 8))
                .map_err(|e| err(e.to_string()))?;
            draw_legend(&head).map_err(err)?;
            let panels = body.split_evenly((n, 1));
            for (ch, area) in panels.iter().enumerate() {
                self.draw_channel(area, ch, labels).map_err(err)?;
            }
            root.present().map_err(|e| err(e.to_string()))?;
        }
        encode_png(out, &rgb, (w, h), name)
    }

    fn seconds(&self, x: u64) -> f64 {
        self.start_s + x as f64 / self.rate_hz
    }

    fn draw_channel(
        &self,
        area: &DrawingArea<BitMapBackend<'_>, Shift>,
        ch: usize,
        labels: &[Label],
    ) -> Result<(), String> {
        let e = |x: DrawingAreaErrorKind<_>| x.to_string();
        let name = self.names.get(ch).map_or("?", String::as_str);
        let t0 = self.start_s;
        let t_end = self.seconds(self.frames).max(t0 + 1e-3);
        let (top, bottom) = area.split_vertically(185);
        let digital = self.digital;
        // Raw signal.
        let raw = self.raw.get(ch).map_or(&[][..], |s| &s.items[..]);
        let lo = raw.iter().map(|b| b.min[0]).fold(f32::INFINITY, f32::min);
        let hi = raw
            .iter()
            .map(|b| b.max[0])
            .fold(f32::NEG_INFINITY, f32::max);
        let (lo, hi) = if lo.is_finite() && hi > lo {
            let pad = (hi - lo) * 0.05;
            (lo - pad, hi + pad)
        } else {
            (lo.min(0.0) - 1.0, hi.max(0.0) + 1.0)
        };
        let mut c = ChartBuilder::on(&top)
            .margin_left(10)
            .margin_right(20)
            .margin_top(5)
            .margin_bottom(12)
            .x_label_area_size(30)
            .y_label_area_size(70)
            .caption(
                if self.digital {
                    format!("{name}: pin level")
                } else {
                    format!("{name}: ADC signal")
                },
                ("sans-serif", 18),
            )
            .build_cartesian_2d(t0..t_end, f64::from(lo)..f64::from(hi))
            .map_err(e)?;
        c.configure_mesh()
            .x_desc("time (s)")
            .y_desc(if self.digital { "level" } else { "ADC code" })
            .y_labels(5)
            .x_label_formatter(&|v| format!("{v:.1}"))
            .y_label_formatter(&|v| {
                if !digital {
                    format!("{v:.0}")
                } else if v.abs() < 0.01 {
                    "0".into()
                } else if (v - 1.0).abs() < 0.01 {
                    "1".into()
                } else {
                    String::new()
                }
            })
            .label_style(("sans-serif", 13))
            .axis_desc_style(("sans-serif", 14))
            .light_line_style(WHITE.mix(0.0))
            .draw()
            .map_err(e)?;
        let wide = self.raw.get(ch).is_some_and(|s| s.width > 1);
        let sig = RGBColor(40, 90, 160);
        if wide {
            c.draw_series(raw.iter().map(|b| {
                let t = self.seconds(b.x0);
                PathElement::new(
                    vec![(t, f64::from(b.min[0])), (t, f64::from(b.max[0]))],
                    sig.stroke_width(1),
                )
            }))
            .map_err(e)?;
        } else {
            c.draw_series(LineSeries::new(
                raw.iter()
                    .map(|b| (self.seconds(b.x0), f64::from(b.last[0]))),
                sig.stroke_width(1),
            ))
            .map_err(e)?;
        }
        // Per-cycle amplitude, baseline, thresholds, events.
        let cyc = self.cycles.get(ch).map_or(&[][..], |s| &s.items[..]);
        let floor = 0.05f32;
        let amp_hi = cyc
            .iter()
            .map(|b| b.max[0].max(b.max[2]))
            .fold(1.0f32, f32::max);
        let amp_lo = cyc
            .iter()
            .map(|b| b.min[0].min(b.min[1]).max(floor))
            .fold(amp_hi, f32::min);
        let y0 = f64::from(amp_lo.max(floor)) / 1.5;
        let y1 = f64::from(amp_hi) * 1.5;
        let mut c = ChartBuilder::on(&bottom)
            .margin_left(10)
            .margin_right(20)
            .margin_top(5)
            .margin_bottom(10)
            .x_label_area_size(35)
            .y_label_area_size(70)
            .caption(
                if self.digital {
                    format!("{name}: hum amplitude from each mains cycle's duty")
                } else {
                    format!("{name}: hum amplitude per mains cycle")
                },
                ("sans-serif", 18),
            )
            .build_cartesian_2d(t0..t_end, (y0..y1).log_scale())
            .map_err(e)?;
        c.configure_mesh()
            .x_desc("time (s)")
            .y_desc(if self.digital {
                "amplitude (threshold units A/Vt, log)"
            } else {
                "amplitude (ADC codes, log)"
            })
            .x_label_formatter(&|v| format!("{v:.1}"))
            .y_label_formatter(&|v| {
                if *v >= 1.0 {
                    format!("{v:.0}")
                } else {
                    format!("{v:.2}")
                }
            })
            .label_style(("sans-serif", 13))
            .axis_desc_style(("sans-serif", 14))
            .light_line_style(WHITE.mix(0.0))
            .draw()
            .map_err(e)?;
        let truth = TRUTH;
        for l in labels.iter().filter(|l| l.channel == name) {
            let s = c
                .draw_series(std::iter::once(Rectangle::new(
                    [(l.start_s, y0), (l.end_s, y1)],
                    truth.mix(0.35).filled(),
                )))
                .map_err(e)?;
            let _ = s;
        }
        let clamp = |v: f32| f64::from(v.max(floor));
        for (_, k, peak, colour, width) in LINES {
            c.draw_series(LineSeries::new(
                cyc.iter().map(|b| {
                    let v = if peak { b.max[k] } else { b.last[k] };
                    (self.seconds(b.x0), clamp(v))
                }),
                colour.stroke_width(width),
            ))
            .map_err(e)?;
        }
        for (i, (_, colour)) in MARKS.into_iter().enumerate() {
            let xs: Vec<f64> = self
                .events
                .iter()
                .filter(|(_, c, _)| usize::from(*c) == ch)
                .filter(|(_, _, k)| match i {
                    0 => matches!(k, EventKind::TouchOn | EventKind::FieldOn),
                    1 => matches!(k, EventKind::TouchOff | EventKind::FieldOff),
                    _ => matches!(k, EventKind::Fault(_)),
                })
                .map(|(s, _, _)| self.seconds(*s))
                .collect();
            if xs.is_empty() {
                continue;
            }
            c.draw_series(
                xs.into_iter()
                    .map(|t| PathElement::new(vec![(t, y0), (t, y1)], colour.stroke_width(2))),
            )
            .map_err(e)?;
        }
        Ok(())
    }
}

/// The amplitude panel's lines: (legend, series index, peak of the bucket
/// rather than its last value, colour, width).
const LINES: [(&str, usize, bool, RGBColor, u32); 4] = [
    ("hum amplitude", 0, true, RGBColor(40, 90, 160), 2),
    ("baseline", 1, false, RGBColor(60, 60, 60), 1),
    ("on threshold", 2, false, RGBColor(200, 40, 40), 1),
    ("off threshold", 3, false, RGBColor(230, 150, 30), 1),
];

/// Event marks: on, off, fault.
const MARKS: [(&str, RGBColor); 3] = [
    ("on event", RGBColor(20, 150, 40)),
    ("off event", RGBColor(140, 40, 170)),
    ("fault", RGBColor(240, 120, 0)),
];

const TRUTH: RGBColor = RGBColor(150, 210, 150);

/// One legend for every panel, in the header strip.
fn draw_legend(area: &DrawingArea<BitMapBackend<'_>, Shift>) -> Result<(), String> {
    let e = |x: DrawingAreaErrorKind<_>| x.to_string();
    let font = ("sans-serif", 15).into_font().color(&BLACK);
    let y = 50;
    let mut x = 20;
    area.draw(&Rectangle::new(
        [(x, y - 7), (x + 22, y + 7)],
        TRUTH.mix(0.35).filled(),
    ))
    .map_err(e)?;
    area.draw_text("labelled interval", &font, (x + 28, y - 8))
        .map_err(e)?;
    x += 190;
    for (label, _, _, colour, _) in LINES {
        area.draw(&PathElement::new(
            vec![(x, y), (x + 22, y)],
            colour.stroke_width(3),
        ))
        .map_err(e)?;
        area.draw_text(label, &font, (x + 28, y - 8)).map_err(e)?;
        x += 160;
    }
    for (label, colour) in MARKS {
        area.draw(&PathElement::new(
            vec![(x + 10, y - 8), (x + 10, y + 8)],
            colour.stroke_width(3),
        ))
        .map_err(e)?;
        area.draw_text(label, &font, (x + 22, y - 8)).map_err(e)?;
        x += 120;
    }
    Ok(())
}

/// Registers the embedded font as `sans-serif` (once).
fn register_font() -> Result<(), String> {
    static ONCE: std::sync::OnceLock<Result<(), String>> = std::sync::OnceLock::new();
    ONCE.get_or_init(|| {
        plotters::style::register_font("sans-serif", FontStyle::Normal, FONT)
            .map_err(|_| "the embedded font could not be loaded".to_string())
    })
    .clone()
}

/// A scatter of tuning results: false events per hour against median on
/// latency, the chosen point ringed.
pub fn write_tradeoff_png(
    out: &mut dyn Write,
    name: &str,
    points: &[(f64, f64)],
    chosen: Option<(f64, f64)>,
    budget_per_hour: f64,
) -> Result<(), String> {
    register_font()?;
    let err = |e: String| format!("{name}: cannot draw the plot: {e}");
    let e = |x: DrawingAreaErrorKind<_>| x.to_string();
    let (w, h) = (1000u32, 700u32);
    let mut rgb = vec![0u8; w as usize * h as usize * 3];
    let root = BitMapBackend::with_buffer(&mut rgb, (w, h)).into_drawing_area();
    root.fill(&WHITE).map_err(|x| err(x.to_string()))?;
    let xmax = points.iter().map(|p| p.0).fold(10.0f64, f64::max) * 1.1;
    let ymax = points
        .iter()
        .map(|p| p.1)
        .fold(budget_per_hour.max(1.0), f64::max)
        * 1.1;
    let mut c = ChartBuilder::on(&root)
        .margin(20)
        .x_label_area_size(45)
        .y_label_area_size(70)
        .caption(
            "tuning: false events per hour against median on latency",
            ("sans-serif", 22),
        )
        .build_cartesian_2d(0.0..xmax, 0.0..ymax)
        .map_err(|x| err(e(x)))?;
    c.configure_mesh()
        .x_desc("median on latency (ms)")
        .y_desc("false events per hour")
        .label_style(("sans-serif", 14))
        .axis_desc_style(("sans-serif", 15))
        .draw()
        .map_err(|x| err(e(x)))?;
    let dot = RGBColor(40, 90, 160);
    c.draw_series(
        points
            .iter()
            .map(|&(x, y)| Circle::new((x, y), 3, dot.mix(0.6).filled())),
    )
    .map_err(|x| err(e(x)))?
    .label("configuration with no missed touch")
    .legend(move |(x, y)| Circle::new((x + 9, y), 4, dot.filled()));
    let red = RGBColor(200, 40, 40);
    c.draw_series(std::iter::once(PathElement::new(
        vec![(0.0, budget_per_hour), (xmax, budget_per_hour)],
        red.stroke_width(1),
    )))
    .map_err(|x| err(e(x)))?
    .label("budget")
    .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 18, y)], red.stroke_width(2)));
    if let Some(p) = chosen {
        let green = RGBColor(20, 150, 40);
        c.draw_series(std::iter::once(Circle::new(p, 9, green.stroke_width(3))))
            .map_err(|x| err(e(x)))?
            .label("chosen")
            .legend(move |(x, y)| Circle::new((x + 9, y), 6, green.stroke_width(2)));
    }
    c.configure_series_labels()
        .position(SeriesLabelPosition::UpperRight)
        .background_style(WHITE.mix(0.85))
        .border_style(BLACK.mix(0.4))
        .label_font(("sans-serif", 14))
        .draw()
        .map_err(|x| err(e(x)))?;
    root.present().map_err(|x| err(x.to_string()))?;
    drop(c);
    drop(root);
    encode_png(out, &rgb, (w, h), name)
}

/// Encodes an RGB picture as PNG into `out` (the `png` crate; plotters'
/// own encoder would pick the format from a file name, and give its errors
/// as debug text). A write error names `name` and says what failed.
fn encode_png(
    out: &mut dyn Write,
    rgb: &[u8],
    (w, h): (u32, u32),
    name: &str,
) -> Result<(), String> {
    let mut enc = png::Encoder::new(out, w, h);
    enc.set_color(png::ColorType::Rgb);
    enc.set_depth(png::BitDepth::Eight);
    let failed = |e: png::EncodingError| match e {
        png::EncodingError::IoError(io) => format!("{name}: cannot write: {io}"),
        other => format!("{name}: cannot encode the plot as PNG: {other}"),
    };
    let mut writer = enc.write_header().map_err(failed)?;
    writer.write_image_data(rgb).map_err(failed)?;
    writer.finish().map_err(failed)
}
