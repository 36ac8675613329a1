//! The tank in the time domain: charge and current of a series RLC after a
//! kick, integrated step by step. The rest of the simulator works with the
//! tank's laws in closed form; this integrator checks them from first
//! principles (energy, decay, ring-down) and drives ring-down demos.
//!
//! dq/dt = i,  L·di/dt = −q/C − R·i.
//!
//! Integration: Störmer–Verlet (leapfrog), which is symplectic for R = 0:
//! the stored energy U = q²/(2C) + L·i²/2 does not drift, it only
//! oscillates by O((ω·Δt)²). The loss term is applied with the midpoint
//! current (implicit), so a lossy tank's energy decays as e^(−R·t/L).

/// One sample of the tank's state.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct State {
    /// Time, s.
    pub t: f64,
    /// Capacitor charge, C.
    pub q: f64,
    /// Coil current, A.
    pub i: f64,
}

/// A series RLC tank.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Tank {
    /// Inductance, H.
    pub l: f64,
    /// Capacitance, F.
    pub c: f64,
    /// Series loss resistance, Ω.
    pub r: f64,
}

impl Tank {
    /// Stored energy, J.
    pub fn energy(&self, s: &State) -> f64 {
        lc_core::tank::stored_energy_j(self.l, self.c, s.q, s.i)
    }

    /// Integrates from `start` for `steps` steps of `dt`, calling `each`
    /// with every state (the start included).
    pub fn run(&self, start: State, dt: f64, steps: u64, mut each: impl FnMut(&State)) -> State {
        let mut s = start;
        each(&s);
        let (l, c, r) = (self.l, self.c, self.r);
        // Trapezoidal (implicit) loss over each half step h = dt/2:
        // i' = i + (h/L)(−q/C − R(i + i')/2), so the factor is R·h/(2L).
        let damp = r * dt / (4.0 * l);
        for _ in 0..steps {
            // Half step of current, full step of charge, half step of current.
            let i_half = (s.i * (1.0 - damp) - dt / (2.0 * l) * s.q / c) / (1.0 + damp);
            let q_new = s.q + dt * i_half;
            let i_new = (i_half * (1.0 - damp) - dt / (2.0 * l) * q_new / c) / (1.0 + damp);
            s = State {
                t: s.t + dt,
                q: q_new,
                i: i_new,
            };
            each(&s);
        }
        s
    }

    /// Positive voltage peaks q/C after a kick (the capacitor charged to
    /// `v0`, no current), over `cycles` periods, `per_cycle` steps each.
    pub fn peaks(&self, v0: f64, cycles: u32, per_cycle: u32) -> Vec<f64> {
        let f0 = lc_core::tank::resonant_frequency_hz(self.l, self.c);
        let dt = 1.0 / (f0 * f64::from(per_cycle));
        let mut peaks = Vec::new();
        let (mut a, mut b) = (f64::NAN, f64::NAN);
        self.run(
            State {
                t: 0.0,
                q: v0 * self.c,
                i: 0.0,
            },
            dt,
            u64::from(cycles) * u64::from(per_cycle),
            |s| {
                let v = s.q / self.c;
                // A local maximum of the sampled voltage, refined by a parabola.
                if b > a && b >= v && b > 0.0 {
                    let denom = a - 2.0 * b + v;
                    let refine = if denom != 0.0 {
                        b - (a - v) * (a - v) / (8.0 * denom)
                    } else {
                        b
                    };
                    peaks.push(refine);
                }
                a = b;
                b = v;
            },
        );
        peaks
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use lc_core::tank;

    /// The demo tank: 7.25 µH, 110 pF (5.6 MHz).
    const L: f64 = 7.25e-6;
    const C: f64 = 110e-12;

    /// A lossless tank keeps its energy (U = q²/2C + L·i²/2):
    /// over 2 000 periods at 200 steps per period the Verlet integrator's
    /// energy stays within its O((ωΔt)²) band and does not drift.
    #[test]
    fn lossless_tank_conserves_energy() {
        let t = Tank { l: L, c: C, r: 0.0 };
        let f0 = tank::resonant_frequency_hz(L, C);
        let dt = 1.0 / (f0 * 200.0);
        let start = State {
            t: 0.0,
            q: 1e-9,
            i: 0.0,
        };
        let u0 = t.energy(&start);
        let (mut lo, mut hi) = (u0, u0);
        let end = t.run(start, dt, 400_000, |s| {
            let u = t.energy(s);
            lo = lo.min(u);
            hi = hi.max(u);
        });
        let band = (2.0 * std::f64::consts::PI / 200.0f64).powi(2);
        assert!((hi - lo) / u0 < band, "energy band {:e}", (hi - lo) / u0);
        assert!((t.energy(&end) - u0).abs() / u0 < band);
    }

    /// A lossy tank's energy decays as e^(−t/(τ/2)), τ = 2L/R
    /// (docs/references.md, LC tank cases), and its peaks fall by the
    /// logarithmic decrement, so the ring count between two thresholds is the
    /// one lc-core's ring-down model predicts for Q = (1/R)·√(L/C).
    #[test]
    fn lossy_tank_decays_like_the_closed_form() {
        let r = 1.2; // Q ≈ 213
        let t = Tank { l: L, c: C, r };
        let tau = tank::series_decay_time_constant_s(L, r);
        let f0 = tank::resonant_frequency_hz(L, C);
        let dt = 1.0 / (f0 * 400.0);
        let start = State {
            t: 0.0,
            q: 1e-9,
            i: 0.0,
        };
        let u0 = t.energy(&start);
        let end = t.run(start, dt, 400 * 300, |_| {});
        let expect = u0 * (-2.0 * end.t / tau).exp();
        // Energy also swaps between C and L within a cycle; at a whole
        // number of cycles it is all in C, so compare there.
        assert!(
            (t.energy(&end) - expect).abs() / expect < 2e-3,
            "{} vs {expect}",
            t.energy(&end)
        );

        let q = tank::series_quality_factor(L, C, r);
        let peaks = t.peaks(1.0, 400, 400);
        let (upper, lower) = (0.9, 0.1);
        let counted = peaks.iter().filter(|&&p| p <= upper && p >= lower).count();
        let predicted = lc_core::ringdown::ring_count(q, peaks[0], upper, lower).unwrap();
        assert!(
            (counted as i64 - i64::from(predicted)).abs() <= 1,
            "counted {counted}, predicted {predicted}"
        );
        // And Q back from two peaks n cycles apart.
        let q_back =
            lc_core::ringdown::quality_factor_from_amplitudes(peaks[10], peaks[110], 100).unwrap();
        assert!((q_back - q).abs() / q < 2e-3, "{q_back} vs {q}");
    }
}
