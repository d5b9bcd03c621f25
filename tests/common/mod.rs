//! Shared test helpers: an adaptive Runge–Kutta integrator for complex ODEs (used to check the
//! explicit Loewner maps against direct integration of the Loewner equation, as in DESIGN §3a),
//! and seeded helpers.
#![allow(dead_code)]

use num_complex::Complex64 as C;

/// Integrate `y' = f(x, y)` from `x0` to `x1` (either direction) with the Dormand–Prince 5(4)
/// pair, error per step ≤ `tol` (mixed absolute/relative). Common practice (Hairer, Nørsett &
/// Wanner, Solving ODEs I, 1993).
pub fn dopri(f: impl Fn(f64, C) -> C, x0: f64, x1: f64, y0: C, tol: f64) -> C {
    const A: [[f64; 6]; 6] = [
        [1.0 / 5.0, 0.0, 0.0, 0.0, 0.0, 0.0],
        [3.0 / 40.0, 9.0 / 40.0, 0.0, 0.0, 0.0, 0.0],
        [44.0 / 45.0, -56.0 / 15.0, 32.0 / 9.0, 0.0, 0.0, 0.0],
        [
            19372.0 / 6561.0,
            -25360.0 / 2187.0,
            64448.0 / 6561.0,
            -212.0 / 729.0,
            0.0,
            0.0,
        ],
        [
            9017.0 / 3168.0,
            -355.0 / 33.0,
            46732.0 / 5247.0,
            49.0 / 176.0,
            -5103.0 / 18656.0,
            0.0,
        ],
        [
            35.0 / 384.0,
            0.0,
            500.0 / 1113.0,
            125.0 / 192.0,
            -2187.0 / 6784.0,
            11.0 / 84.0,
        ],
    ];
    const CS: [f64; 7] = [0.0, 0.2, 0.3, 0.8, 8.0 / 9.0, 1.0, 1.0];
    const B4: [f64; 7] = [
        5179.0 / 57600.0,
        0.0,
        7571.0 / 16695.0,
        393.0 / 640.0,
        -92097.0 / 339200.0,
        187.0 / 2100.0,
        1.0 / 40.0,
    ];
    let span = x1 - x0;
    let mut h = span / 100.0;
    let mut x = x0;
    let mut y = y0;
    let mut guard = 0;
    while (x1 - x) * span.signum() > 0.0 {
        guard += 1;
        assert!(guard < 10_000_000, "ODE integration did not finish");
        if (x + h - x1) * span.signum() > 0.0 {
            h = x1 - x;
        }
        let mut k = [C::new(0.0, 0.0); 7];
        k[0] = f(x, y);
        for s in 1..7 {
            let mut yi = y;
            for j in 0..s {
                yi += k[j] * (A[s - 1][j] * h);
            }
            k[s] = f(x + CS[s] * h, yi);
        }
        // The 5th-order weights are the last stage's row of A (first same as last).
        let mut y5 = y;
        let mut y4 = y;
        for s in 0..7 {
            let b5 = if s < 6 { A[5][s] } else { 0.0 };
            y5 += k[s] * (b5 * h);
            y4 += k[s] * (B4[s] * h);
        }
        let err = (y5 - y4).norm() / (tol * (1.0 + y.norm()));
        if err <= 1.0 {
            x += h;
            y = y5;
        }
        let fac = if err == 0.0 {
            5.0
        } else {
            (0.9 * err.powf(-0.2)).clamp(0.2, 5.0)
        };
        h *= fac;
    }
    y
}

/// `g_{t1}(z)` for the chordal Loewner flow driven on one step by `W(t) = w0 + c√(t − t0)`,
/// started from `g_{t0}(z) = z`, integrated in `σ = √(t − t0)` so the right side is smooth.
pub fn forward_sqrt_step(z: C, w0: f64, c: f64, dt: f64, tol: f64) -> C {
    dopri(|s, g| 4.0 * s / (g - w0 - c * s), 0.0, dt.sqrt(), z, tol)
}

/// The inverse of one step by the backward flow: `h' = −2/(h − W)` run from the end of the step
/// to its start, in `σ = √(t − t0)` from `√dt` down to 0.
pub fn inverse_sqrt_step(w: C, w0: f64, c: f64, dt: f64, tol: f64) -> C {
    dopri(|s, h| 4.0 * s / (h - w0 - c * s), dt.sqrt(), 0.0, w, tol)
}

/// Reference values written by the mpmath scripts in `scripts/` (files in `tests/data/`).
pub mod reference {
    use serde_json::Value;

    /// The parsed JSON file `tests/data/<name>`.
    pub fn load(name: &str) -> Value {
        let path = format!("{}/tests/data/{name}", env!("CARGO_MANIFEST_DIR"));
        let text = std::fs::read_to_string(&path).unwrap_or_else(|_| panic!("{path} is missing"));
        serde_json::from_str(&text).expect("reference JSON does not parse")
    }

    /// A field stored as a JSON number (inputs: exact IEEE doubles).
    pub fn num(v: &Value, key: &str) -> f64 {
        v[key]
            .as_f64()
            .unwrap_or_else(|| panic!("{key} missing in {v}"))
    }

    /// A field stored as a decimal string (reference values, 20–30 digits; parsing rounds
    /// correctly).
    pub fn val(v: &Value, key: &str) -> f64 {
        v[key]
            .as_str()
            .unwrap_or_else(|| panic!("{key} missing in {v}"))
            .parse()
            .unwrap()
    }

    /// An array field.
    pub fn rows<'a>(data: &'a Value, key: &str) -> &'a Vec<Value> {
        data[key]
            .as_array()
            .unwrap_or_else(|| panic!("{key} missing"))
    }
}
