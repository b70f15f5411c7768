//! Exact Fourier coefficients of piecewise-linear periodic waveforms.
//!
//! For a linear segment x(t) = a + s (t − t0) on [t0, t1] and ω_k = k·2π/T,
//! ∫ x e^{−jωt} dt = [ (j/ω) x(t) e^{−jωt} + (s/ω²) e^{−jωt} ] from t0 to t1.
//! The peak phasor of harmonic k is I_k = (2/T) Σ over segments, so that
//! x(t) = mean + Σ_k Re(I_k e^{jkωt}).

use crate::converter::Waveform;
use num_complex::Complex64;
use std::f64::consts::PI;

/// Peak phasors I_1 … I_n of the waveform (DC dropped).
pub fn harmonics(w: &Waveform, n: usize) -> Vec<Complex64> {
    let t = w.period;
    let w0 = 2.0 * PI / t;
    (1..=n)
        .map(|k| {
            let om = w0 * k as f64;
            let mut acc = Complex64::new(0.0, 0.0);
            for ((ta, va), (tb, vb)) in w.segments() {
                let dt = tb - ta;
                if dt <= 0.0 {
                    continue;
                }
                let s = (vb - va) / dt;
                let ea = Complex64::from_polar(1.0, -om * ta);
                let eb = Complex64::from_polar(1.0, -om * tb);
                let j_over = Complex64::new(0.0, 1.0 / om);
                acc += j_over * (eb * vb - ea * va) + (eb - ea) * (s / (om * om));
            }
            acc * (2.0 / t)
        })
        .collect()
}

/// Number of harmonics when `target.harmonics = 0`: the smallest N
/// with N · f ≥ 10 × bandwidth (500 MHz at full bandwidth), at most 4000.
pub(crate) fn auto_count(f_ripple: f64, bandwidth: Option<f64>) -> usize {
    let top = bandwidth.map_or(500e6, |b| 10.0 * b);
    ((top / f_ripple).ceil() as usize).clamp(1, 4000)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn asymmetric_triangle_closed_form() {
        // Closed form of the Fourier series of an asymmetric triangle of
        // peak-to-peak ΔI rising for D·T: peak amplitude of harmonic n is
        // ΔI·|sin(nπD)|/(π²n²D(1−D)) (Fourier series of a linear-segment
        // waveform; e.g. Erickson & Maksimović, Fundamentals of Power
        // Electronics, harmonics of switching waveforms). At D = 0.5 it gives
        // the familiar 8/π² · (ΔI/2) for the fundamental.
        for &d in &[0.1, 0.275, 0.5, 0.83] {
            let di = 1.7;
            let w = Waveform {
                period: 1e-6,
                points: vec![(0.0, -di / 2.0), (d * 1e-6, di / 2.0)],
            };
            let h = harmonics(&w, 50);
            for (i, c) in h.iter().enumerate() {
                let n = (i + 1) as f64;
                let cn = di * (n * PI * d).sin().abs() / (PI * PI * n * n * d * (1.0 - d));
                assert!(
                    (c.norm() - cn).abs() < 1e-9 * di,
                    "D={d} n={n}: {} vs {cn}",
                    c.norm()
                );
            }
        }
    }

    #[test]
    fn square_wave_closed_form() {
        // A ±1 square wave has peak harmonics 4/(πn) at odd n, 0 at even n
        // (any signals-and-systems text, Fourier series of a square wave).
        let w = Waveform {
            period: 1.0,
            points: vec![(0.0, 1.0), (0.5, 1.0), (0.5, -1.0), (1.0, -1.0)],
        };
        let h = harmonics(&w, 9);
        for (i, c) in h.iter().enumerate() {
            let n = i + 1;
            let want = if n % 2 == 1 {
                4.0 / (PI * n as f64)
            } else {
                0.0
            };
            assert!((c.norm() - want).abs() < 1e-12, "n={n}");
        }
    }

    #[test]
    fn auto_count_rule() {
        assert_eq!(auto_count(600e3, Some(20e6)), 334);
        assert_eq!(auto_count(1e6, None), 500);
        assert_eq!(auto_count(1e3, None), 4000);
    }
}
