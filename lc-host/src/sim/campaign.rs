//! The fault campaign: a multi-channel field log with the faults the field
//! sees injected, and the ground truth of every row in a `label` column, so
//! that a test can count what the readers flag against what was injected
//! (docs/faults.md).
//!
//! Each channel is a unit with its own calibration image: a proximity unit
//! (a target sweeping the curve's span) or a level unit with a reference
//! electrode (the level sweeping the curve's span of probe / reference
//! ratios). Temperatures follow a slow warm-up and a daily swing within the
//! drift model's domain; the counts are the ones the unit's L·C gives
//! through its own drift model (so that the model compensates them back),
//! with 0.3 ticks of counter jitter. Faults, one at a time per channel:
//!
//! | label | what the log holds |
//! |---|---|
//! | `clean` | the unit's counts and temperature |
//! | `stuck_onset`, `stuck` | the counter (both channels of a level unit) frozen at the pair of the fault's first row, a plausible reading; `stuck_onset` for its first `limit − 1` rows, which no check that looks back can tell from a still target ([`lc_core::reader::FrozenCounter`]), `stuck` from the `limit`-th on |
//! | `ntc_open` | no temperature: the unit's NTC converter refused the open sensor (empty `temp_c`) |
//! | `ntc_short` | 527.43 °C: a logger converting the shorted divider's code 1 of 4 095 through the Beta law (10 kΩ, B 3 950 K, 10 kΩ series) |
//! | `temp_spike` | one row's temperature replaced by −273.15, 1 000, 10⁷ or 3·10⁷ °C (a bit error, a sentinel) |
//! | `reference_drying` | level units: the reference electrode left with 2 % of its wet shift, falling to none |
//! | `channel_swap` | a proximity and a level channel's rows written under each other's channel number |
//!
//! Seeded and reproducible: the same spec writes the same bytes.

use super::Rng;
use lc_core::image::{Calibration, ReaderKind};
use std::io::Write;

/// The field-log header written by [`write_campaign_log`].
pub const HEADER: &str = "time_s,channel,cycles,ticks,comp_cycles,comp_ticks,temp_c,label";

/// The labels, in the order the confusion matrix lists them.
pub const LABELS: [&str; 8] = [
    "clean",
    "stuck_onset",
    "stuck",
    "ntc_open",
    "ntc_short",
    "temp_spike",
    "reference_drying",
    "channel_swap",
];

/// The temperature a shorted NTC gives through a plain Beta-law
/// conversion of ADC code 1 (12 bits, NTC 10 kΩ at 25 °C, B 3 950 K, on
/// the low side of a 10 kΩ series resistor): R = 10 kΩ/4 094 = 2.44 Ω,
/// 1/T = 1/298.15 K + ln(R/10 kΩ)/3 950 K, T = 800.6 K.
pub const SHORTED_NTC_C: f64 = 527.43;

/// Temperatures of the injected spikes, °C.
pub const SPIKES_C: [f64; 4] = [-273.15, 1_000.0, 1e7, 3e7];

/// What to simulate.
#[derive(Clone, Debug)]
pub struct CampaignSpec {
    /// One calibration per channel, channel 0 first: proximity images, and
    /// level images with a reference electrode.
    pub channels: Vec<Calibration>,
    /// Rows in all (one per channel per time step; the last step may be
    /// cut short).
    pub rows: u64,
    /// Rows per second of each channel.
    pub rate_hz: f64,
    /// The frozen-counter limit the readers use (the `stuck_onset` /
    /// `stuck` boundary).
    pub frozen_limit: u8,
    /// A new fault starts on an idle channel with this probability per
    /// row.
    pub fault_rate: f64,
    /// Counter jitter, ticks (standard deviation).
    pub jitter_ticks: f64,
    /// Seed.
    pub seed: u64,
}

impl CampaignSpec {
    /// The campaign's defaults for `channels` and `rows`: 10 readings a
    /// second, the readers' default frozen limit, a fault starting about
    /// every 2 000 idle rows of a channel, 0.3 ticks of jitter.
    pub fn new(channels: Vec<Calibration>, rows: u64, seed: u64) -> Self {
        Self {
            channels,
            rows,
            rate_hz: 10.0,
            frozen_limit: lc_core::reader::DEFAULT_FROZEN_LIMIT,
            fault_rate: 5e-4,
            jitter_ticks: 0.3,
            seed,
        }
    }
}

/// Why a campaign cannot be simulated.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum CampaignError {
    /// A channel's image is not a proximity image, nor a level image with
    /// a reference electrode.
    #[error("channel {0}: the campaign simulates proximity images and level images with a reference electrode")]
    Unsupported(usize),
    /// Fewer than one channel.
    #[error("the campaign needs at least one channel")]
    NoChannel,
}

#[derive(Clone, Copy, Debug, PartialEq)]
enum Kind {
    Stuck,
    NtcOpen,
    NtcShort,
    Spike,
    Drying,
    Swap,
}

/// One channel's unit: what its counts are made from.
#[derive(Clone, Debug)]
struct Unit {
    level: bool,
    gate: f64,
    /// Ticks per cycle at rest, sensor and companion.
    rest: f64,
    comp_rest: f64,
    /// The curve's span (shift or ratio).
    span: (f64, f64),
    /// The drift model: reference °C, b1 per K, b2 per K².
    drift: (f64, f64, f64),
    /// The reference electrode's wet shift.
    wet: f64,
    /// Phases, so that channels differ.
    phase: f64,
    period_s: f64,
}

/// One row before faults.
#[derive(Clone, Copy, Debug)]
struct Row {
    cycles: u32,
    ticks: u32,
    comp: Option<(u32, u32)>,
    temp: Option<f64>,
    label: &'static str,
}

impl Unit {
    fn new(k: usize, cal: &Calibration) -> Result<Self, CampaignError> {
        let curve = cal.curve.as_ref().ok_or(CampaignError::Unsupported(k))?;
        let level = match (cal.kind, cal.companion_rest) {
            (ReaderKind::Proximity, _) => false,
            (ReaderKind::Level, Some(_)) => true,
            _ => return Err(CampaignError::Unsupported(k)),
        };
        let nodes = curve.nodes();
        let (a, b) = (
            nodes[0].shift.to_f64(),
            nodes[nodes.len() - 1].shift.to_f64(),
        );
        let (b1, b2) = cal.drift.coefficients_f64();
        Ok(Self {
            level,
            gate: f64::from(cal.gate().unwrap_or(16_384)),
            rest: cal.rest.to_f64(),
            comp_rest: cal.companion_rest.map_or(0.0, |r| r.to_f64()),
            span: (a.min(b), a.max(b)),
            drift: (cal.drift.reference().to_f64(), b1, b2),
            wet: 0.17,
            phase: k as f64 * 0.37,
            // Cycles incommensurate with the logging rate: a press whose
            // stroke took a whole number of readings would bring the
            // counts back to a frozen pair's value when the freeze ends.
            period_s: if level {
                1_800.0 + 7.0 * std::f64::consts::SQRT_2 * k as f64
            } else {
                2.0 + 0.3 * k as f64 + 0.01 * std::f64::consts::PI
            },
        })
    }

    fn temperature(&self, t: f64) -> f64 {
        // A warm-up of 20 K (time constant 40 min) and a daily swing of
        // ±10 K around 30 °C.
        30.0 + 20.0 * (1.0 - (-t / 2_400.0).exp())
            + 10.0 * (2.0 * std::f64::consts::PI * (t / 86_400.0 + self.phase)).sin()
            - 10.0
    }

    /// The raw count of a compensated shift `s` at temperature `temp`:
    /// 1 + s = (1 + s_raw)·(1 + g), ticks = gate·rest·√(1 + s_raw).
    fn ticks(&self, rest: f64, s: f64, temp: f64, rng: &mut Rng, jitter: f64) -> u32 {
        let (t0, b1, b2) = self.drift;
        let dt = temp - t0;
        let g = b1 * dt + b2 * dt * dt;
        let raw = (1.0 + s) / (1.0 + g);
        (self.gate * rest * raw.sqrt() + rng.normal(0.0, jitter)).round() as u32
    }

    /// The clean row at time `t`, the reference electrode keeping `wet`
    /// of its wet shift.
    fn row(&self, t: f64, wet: f64, rng: &mut Rng, jitter: f64) -> Row {
        let temp = self.temperature(t);
        // The target (or level) sweeps 5 %…95 % of the curve's span.
        let (lo, hi) = self.span;
        let u = 0.5 - 0.45 * (2.0 * std::f64::consts::PI * (t / self.period_s + self.phase)).cos();
        let x = lo + (hi - lo) * u;
        let gate = self.gate as u32;
        if self.level {
            let r = self.wet * wet;
            let s = x * self.wet;
            Row {
                cycles: gate,
                ticks: self.ticks(self.rest, s, temp, rng, jitter),
                comp: Some((gate, self.ticks(self.comp_rest, r, temp, rng, jitter))),
                temp: Some(temp),
                label: "clean",
            }
        } else {
            Row {
                cycles: gate,
                ticks: self.ticks(self.rest, x, temp, rng, jitter),
                comp: None,
                temp: Some(temp),
                label: "clean",
            }
        }
    }
}

/// A fault in progress on one channel.
#[derive(Clone, Copy, Debug)]
struct Active {
    kind: Kind,
    /// Rows left, this one included.
    left: u64,
    /// Rows done.
    done: u64,
    /// Frozen row (stuck), the swap partner (swap).
    held: Option<Row>,
    partner: usize,
}

/// Rows written per label, in [`LABELS`] order.
pub type LabelCounts = [u64; 8];

/// Writes the campaign's field log; returns the rows written per label.
pub fn write_campaign_log(
    spec: &CampaignSpec,
    mut out: impl Write,
) -> Result<LabelCounts, CampaignIoError> {
    if spec.channels.is_empty() {
        return Err(CampaignError::NoChannel.into());
    }
    let units = spec
        .channels
        .iter()
        .enumerate()
        .map(|(k, c)| Unit::new(k, c))
        .collect::<Result<Vec<_>, _>>()?;
    let n = units.len();
    let mut rng = Rng::new(spec.seed);
    let mut active: Vec<Option<Active>> = vec![None; n];
    let mut counts = [0u64; 8];
    writeln!(
        out,
        "# Simulated fault campaign: {n} channels, {} rows, {} readings/s per channel, frozen limit {} (lc-host sim::campaign, seed {})",
        spec.rows, spec.rate_hz, spec.frozen_limit, spec.seed
    )?;
    writeln!(out, "{HEADER}")?;
    let onset = u64::from(spec.frozen_limit.max(1)) - 1;
    let mut written = 0u64;
    let mut step = 0u64;
    let mut rows = vec![None; n];
    while written < spec.rows {
        let t = step as f64 / spec.rate_hz;
        // Start faults on idle channels.
        for k in 0..n {
            if active[k].is_some() || rng.uniform() >= spec.fault_rate {
                continue;
            }
            let level = units[k].level;
            let kinds: &[Kind] = if level {
                &[
                    Kind::Stuck,
                    Kind::NtcOpen,
                    Kind::NtcShort,
                    Kind::Spike,
                    Kind::Drying,
                    Kind::Swap,
                ]
            } else {
                &[
                    Kind::Stuck,
                    Kind::NtcOpen,
                    Kind::NtcShort,
                    Kind::Spike,
                    Kind::Swap,
                ]
            };
            let kind = kinds[(rng.uniform() * kinds.len() as f64) as usize % kinds.len()];
            let len = |rng: &mut Rng, a: f64, b: f64| (a + (b - a) * rng.uniform()) as u64;
            let (left, partner) = match kind {
                Kind::Stuck => (len(&mut rng, 300.0, 3_000.0), k),
                Kind::NtcOpen | Kind::NtcShort => (len(&mut rng, 20.0, 500.0), k),
                Kind::Spike => (1, k),
                Kind::Drying => (len(&mut rng, 100.0, 2_000.0), k),
                Kind::Swap => {
                    // A partner of the other kind, idle.
                    let Some(p) =
                        (0..n).find(|&p| p != k && units[p].level != level && active[p].is_none())
                    else {
                        continue;
                    };
                    (len(&mut rng, 10.0, 300.0), p)
                }
            };
            let a = Active {
                kind,
                left,
                done: 0,
                held: None,
                partner,
            };
            active[k] = Some(a);
            if kind == Kind::Swap {
                active[partner] = Some(Active { partner: k, ..a });
            }
        }
        // Each channel's row, faults applied.
        for k in 0..n {
            let wet = match active[k] {
                Some(Active {
                    kind: Kind::Drying,
                    left,
                    done,
                    ..
                }) => 0.02 * left as f64 / (left + done) as f64,
                _ => 1.0,
            };
            let mut row = units[k].row(t, wet, &mut rng, spec.jitter_ticks);
            if let Some(a) = active[k].as_mut() {
                match a.kind {
                    Kind::Stuck => {
                        let held = *a.held.get_or_insert(row);
                        row.cycles = held.cycles;
                        row.ticks = held.ticks;
                        row.comp = held.comp;
                        row.label = if a.done < onset {
                            "stuck_onset"
                        } else {
                            "stuck"
                        };
                    }
                    Kind::NtcOpen => {
                        row.temp = None;
                        row.label = "ntc_open";
                    }
                    Kind::NtcShort => {
                        row.temp = Some(SHORTED_NTC_C);
                        row.label = "ntc_short";
                    }
                    Kind::Spike => {
                        row.temp = Some(SPIKES_C[(rng.uniform() * 4.0) as usize % SPIKES_C.len()]);
                        row.label = "temp_spike";
                    }
                    Kind::Drying => row.label = "reference_drying",
                    Kind::Swap => row.label = "channel_swap",
                }
            }
            rows[k] = Some(row);
        }
        // Swapped channels: each row under the other's number.
        let mut order: Vec<(usize, usize)> = (0..n).map(|k| (k, k)).collect();
        for (k, a) in active.iter().enumerate() {
            if let Some(a) = a {
                if a.kind == Kind::Swap {
                    order[k].1 = a.partner;
                }
            }
        }
        for &(k, from) in &order {
            if written == spec.rows {
                break;
            }
            let Some(r) = rows[from] else { continue };
            let (cc, ct) = r.comp.map_or((String::new(), String::new()), |(c, t)| {
                (c.to_string(), t.to_string())
            });
            let temp = r.temp.map_or(String::new(), |x| format!("{x:.2}"));
            writeln!(
                out,
                "{t:.1},{k},{},{},{cc},{ct},{temp},{}",
                r.cycles, r.ticks, r.label
            )?;
            let i = LABELS.iter().position(|l| *l == r.label).unwrap_or(0);
            counts[i] += 1;
            written += 1;
        }
        // Advance the faults.
        for a in active.iter_mut() {
            if let Some(x) = a {
                x.left -= 1;
                x.done += 1;
                if x.left == 0 {
                    *a = None;
                }
            }
        }
        step += 1;
    }
    Ok(counts)
}

/// A campaign that could not be written.
#[derive(Debug, thiserror::Error)]
pub enum CampaignIoError {
    /// The spec.
    #[error(transparent)]
    Spec(#[from] CampaignError),
    /// Writing.
    #[error(transparent)]
    Io(#[from] std::io::Error),
}
