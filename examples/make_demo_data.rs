//! Generates the invented demo coding sheet in datasets-demo/.
//!
//! Run: `cargo run --example make_demo_data` (writes datasets-demo/candor-benchmark.csv
//! datasets-demo/candor-items.csv and datasets-demo/candor-study.csv).
//!
//! The scenario is invented: the "Brindlewood Team Candor Inventory" is a fictional
//! scale, and every sample, number and label below is made up by this program. The
//! model behind it is written out in datasets-demo/README.md.
//!
//! A small self-contained generator (SplitMix64 with Box–Muller normals) keeps the file
//! identical on every machine and every version of every dependency; the test
//! tests/demo_data.rs checks that the committed file is what this program writes.

use std::fmt::Write;

/// The seed of the demo data.
pub const SEED: u64 = 20_261_201;

/// SplitMix64 (Steele, Lea & Flood 2014): a tiny, well-mixed 64-bit generator.
pub struct SplitMix64(u64);

impl SplitMix64 {
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform on (0, 1).
    pub fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    /// Standard normal (Box–Muller, one value per call).
    pub fn normal(&mut self) -> f64 {
        let u1 = self.uniform();
        let u2 = self.uniform();
        (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
    }
}

const POPULATIONS: [(&str, f64); 5] = [
    // (population, true-score SD of the mean item score)
    ("hospital nurses", 0.62),
    ("school teachers", 0.66),
    ("software teams", 0.72),
    ("retail staff", 0.50),
    ("university students", 0.58),
];

/// The demo sheet as CSV text.
pub fn generate() -> String {
    let mut rng = SplitMix64(SEED);
    let k_studies: i32 = 36;
    let mut out = String::from(
        "study,year,coef,coef_type,n,items,sd,sd_metric,scale_min,scale_max,field_maturity,population,language\n",
    );
    for i in 0..k_studies {
        let year = 2009 + i * 17 / k_studies + (rng.uniform() * 1.5) as i32;
        let maturity = if year <= 2013 {
            "exploratory"
        } else if year <= 2019 {
            "developing"
        } else {
            "established"
        };
        let (population, true_sd_base) = POPULATIONS[(rng.uniform() * 5.0) as usize % 5];
        let short_form = rng.uniform() < 0.3;
        let items: u32 = if short_form { 6 } else { 10 };
        let seven_point = rng.uniform() < 0.25;
        let (lo, hi) = if seven_point { (1.0, 7.0) } else { (1.0, 5.0) };
        let stretch = (hi - lo) / 4.0; // a 7-point scale spreads scores by 6/4
        let translated = rng.uniform() < 0.35;
        // Per-item error variance on the 5-point metric: larger for translated versions
        // and in the exploratory years, when the items were still being revised.
        let mut item_error_var = 0.80;
        if translated {
            item_error_var += 0.15;
        }
        if maturity == "exploratory" {
            item_error_var += 0.12;
        }
        item_error_var *= (0.12 * rng.normal()).exp();
        let true_sd = true_sd_base * (0.15 * rng.normal()).exp() * stretch;
        let error_var = item_error_var * stretch * stretch / f64::from(items);
        let true_var = true_sd * true_sd;
        let alpha_true = true_var / (true_var + error_var);
        let n = (160.0 * (0.7 * rng.normal()).exp())
            .round()
            .clamp(45.0, 1400.0) as u64;
        // Sampling error of alpha on the Bonett scale.
        let kf = f64::from(items);
        let se = (2.0 * kf / ((kf - 1.0) * (n as f64 - 2.0))).sqrt();
        let alpha = 1.0 - ((1.0 - alpha_true).ln() + se * rng.normal()).exp();
        // Sample SD of the mean score, with its own sampling error.
        let sd_mean =
            (true_var + error_var).sqrt() * (1.0 + rng.normal() / (2.0 * n as f64).sqrt());
        let omega = rng.uniform() < 0.12;
        let (coef_type, coef) = if omega {
            // Omega is a little above alpha when loadings differ.
            ("omega", (alpha + 0.015).min(0.97))
        } else {
            ("alpha", alpha)
        };
        let sd_choice = rng.uniform();
        let (sd, metric) = if sd_choice < 0.1 {
            (String::new(), String::new())
        } else if sd_choice < 0.55 {
            (format!("{:.2}", sd_mean), "mean".to_string())
        } else {
            (format!("{:.2}", sd_mean * kf), "sum".to_string())
        };
        let language = if translated { "translated" } else { "original" };
        let _ = writeln!(
            out,
            "Sample {:02},{year},{:.2},{coef_type},{n},{items},{sd},{metric},{lo},{hi},{maturity},{population},{language}",
            i + 1,
            coef
        );
    }
    out
}

#[allow(dead_code)]
fn main() {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("datasets-demo")
        .join("candor-benchmark.csv");
    std::fs::write(&path, generate()).expect("write the demo sheet");
    println!("wrote {}", path.display());
    let items = path.with_file_name("candor-items.csv");
    std::fs::write(&items, generate_items()).expect("write the demo item data");
    println!("wrote {}", items.display());
    let study = path.with_file_name("candor-study.csv");
    std::fs::write(&study, generate_study()).expect("write the demo study");
    println!("wrote {}", study.display());
}

/// Invented item responses for the demo scale: 300 respondents × 10 items on a 1–5 scale,
/// one factor with unequal loadings (so alpha is a lower bound), items 4 and 9 worded in
/// reverse, and a few missing answers. Same generator and seed family as the sheet.
pub fn generate_items() -> String {
    let mut rng = SplitMix64(SEED ^ 0x1715);
    let loadings = [0.78, 0.71, 0.66, 0.58, 0.74, 0.52, 0.69, 0.61, 0.45, 0.70];
    let reversed = [
        false, false, false, true, false, false, false, false, true, false,
    ];
    let mut out = String::from("respondent");
    for i in 1..=10 {
        out.push_str(&format!(",btci_{i:02}"));
    }
    out.push('\n');
    for r in 0..300 {
        out.push_str(&format!("R{:03}", r + 1));
        let trait_score = rng.normal();
        for (i, l) in loadings.iter().enumerate() {
            let latent = l * trait_score + (1.0 - l * l).sqrt() * rng.normal();
            // Thresholds turn the latent response into 1–5.
            let mut x = 1 + [-1.6, -0.6, 0.3, 1.2]
                .iter()
                .filter(|&&t| latent > t)
                .count() as i32;
            if reversed[i] {
                x = 6 - x;
            }
            if rng.uniform() < 0.01 {
                out.push(',');
            } else {
                out.push_str(&format!(",{x}"));
            }
        }
        out.push('\n');
    }
    out
}

/// An invented study for the correction demo: 250 "respondents" with three scale scores —
/// candor (reliability about 0.80), safety (about 0.70) and engagement (about 0.85) —
/// built from true scores plus error.
pub fn generate_study() -> String {
    let mut rng = SplitMix64(SEED ^ 0x5707);
    let mut out = String::from("respondent,candor,safety,engagement\n");
    for r in 0..250 {
        let t1 = rng.normal();
        let t2 = 0.4 * t1 + (1.0f64 - 0.16).sqrt() * rng.normal();
        let ty = 0.35 * t1 + 0.25 * t2 + 0.85 * rng.normal();
        // Error variances giving the stated reliabilities for unit true-score variances
        // (the outcome's true-score variance is about 0.94).
        let x1 = 3.4 + 0.6 * (t1 + (0.25f64).sqrt() * rng.normal());
        let x2 = 3.1 + 0.5 * (t2 + (0.4286f64).sqrt() * rng.normal());
        let y = 3.6 + 0.55 * (ty + (0.166f64).sqrt() * rng.normal());
        out.push_str(&format!("R{:03},{x1:.3},{x2:.3},{y:.3}\n", r + 1));
    }
    out
}
