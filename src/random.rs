//! Reproducible random streams: every draw of a resampling procedure gets its own
//! generator, seeded from the user's seed and the draw's index, so that results are
//! identical for a seed whatever the number of threads.

use rand::SeedableRng;
use rand::rngs::ChaCha8Rng;

/// SplitMix64's finalizer (Steele, Lea & Flood 2014): a bijective 64-bit mixer.
fn mix(mut z: u64) -> u64 {
    z = z.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// The generator for draw `index` of a run seeded with `seed` (ChaCha with 8 rounds).
pub fn stream(seed: u64, index: u64) -> ChaCha8Rng {
    ChaCha8Rng::seed_from_u64(mix(seed ^ mix(index)))
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::RngExt;

    #[test]
    fn streams_are_reproducible_and_distinct() {
        let a: u64 = stream(7, 3).random();
        let b: u64 = stream(7, 3).random();
        let c: u64 = stream(7, 4).random();
        let d: u64 = stream(8, 3).random();
        assert_eq!(a, b);
        assert_ne!(a, c);
        assert_ne!(a, d);
    }
}

/// Draws from the distributions the resampling procedures need.
pub mod draw {
    use nalgebra::DMatrix;
    use rand::{Rng, RngExt};

    /// A standard normal draw (the ziggurat method of `rand_distr`; Marsaglia & Tsang
    /// 2000, The ziggurat method for generating random variables, Journal of Statistical
    /// Software 5(8)).
    pub fn normal<R: Rng>(rng: &mut R) -> f64 {
        rng.sample(rand_distr::StandardNormal)
    }

    /// A Gamma(shape, 1) draw (Marsaglia & Tsang 2000; shape < 1 by the boost
    /// G(a) = G(a + 1)·U^(1/a)).
    ///
    /// # References
    /// Marsaglia, G., & Tsang, W. W. (2000). A simple method for generating gamma variables.
    /// *ACM Transactions on Mathematical Software*, 26(3), 363–372.
    pub fn gamma<R: Rng>(rng: &mut R, shape: f64) -> f64 {
        if shape < 1.0 {
            let u: f64 = 1.0 - rng.random::<f64>();
            return gamma(rng, shape + 1.0) * u.powf(1.0 / shape);
        }
        let d = shape - 1.0 / 3.0;
        let c = 1.0 / (9.0 * d).sqrt();
        loop {
            let x = normal(rng);
            let v = (1.0 + c * x).powi(3);
            if v <= 0.0 {
                continue;
            }
            let u: f64 = 1.0 - rng.random::<f64>();
            if u.ln() < 0.5 * x * x + d - d * v + d * v.ln() {
                return d * v;
            }
        }
    }

    /// A χ²(df) draw.
    pub fn chi2<R: Rng>(rng: &mut R, df: f64) -> f64 {
        2.0 * gamma(rng, df / 2.0)
    }

    /// A Student t(df) draw.
    pub fn student_t<R: Rng>(rng: &mut R, df: f64) -> f64 {
        normal(rng) / (chi2(rng, df) / df).sqrt()
    }

    /// A draw of the sample covariance matrix of n observations from a normal population
    /// with covariance `sigma`: W/(n − 1) with W ~ Wishart(n − 1, sigma), by Bartlett's
    /// decomposition. `chol` is the lower Cholesky factor of sigma.
    ///
    /// # References
    /// Bartlett, M. S. (1933). On the theory of statistical regression. *Proceedings of the
    /// Royal Society of Edinburgh*, 53, 260–283.
    pub fn sample_covariance<R: Rng>(rng: &mut R, chol: &DMatrix<f64>, n: f64) -> DMatrix<f64> {
        let p = chol.nrows();
        let df = n - 1.0;
        let mut a = DMatrix::zeros(p, p);
        for i in 0..p {
            a[(i, i)] = chi2(rng, df - i as f64).sqrt();
            for j in 0..i {
                a[(i, j)] = normal(rng);
            }
        }
        let la = chol * a;
        (&la * la.transpose()) / df
    }
}

#[cfg(test)]
mod draw_tests {
    use super::*;

    /// Moments of the draws against their known values (mean and variance of Gamma(a) are
    /// both a; of χ²(ν) ν and 2ν; of t(ν) 0 and ν/(ν − 2)).
    #[test]
    fn draws_have_their_moments() {
        let mut rng = stream(1, 0);
        let n = 200_000;
        for shape in [0.5, 2.0, 30.0] {
            let xs: Vec<f64> = (0..n).map(|_| draw::gamma(&mut rng, shape)).collect();
            let m = xs.iter().sum::<f64>() / n as f64;
            let v = xs.iter().map(|x| (x - m).powi(2)).sum::<f64>() / n as f64;
            assert!(
                (m - shape).abs() < 0.02 * shape.max(1.0),
                "gamma {shape}: mean {m}"
            );
            assert!(
                (v - shape).abs() < 0.05 * shape.max(1.0),
                "gamma {shape}: var {v}"
            );
        }
        let ts: Vec<f64> = (0..n).map(|_| draw::student_t(&mut rng, 10.0)).collect();
        let v = ts.iter().map(|x| x * x).sum::<f64>() / n as f64;
        assert!((v - 1.25).abs() < 0.03, "t var {v}");
    }

    /// The expected sample covariance is sigma.
    #[test]
    fn sample_covariance_is_unbiased() {
        let sigma = nalgebra::DMatrix::from_row_slice(2, 2, &[2.0, 0.6, 0.6, 1.0]);
        let chol = sigma.clone().cholesky().unwrap().l();
        let mut rng = stream(2, 0);
        let mut acc = nalgebra::DMatrix::zeros(2, 2);
        let reps = 20_000;
        for _ in 0..reps {
            acc += draw::sample_covariance(&mut rng, &chol, 30.0);
        }
        acc /= reps as f64;
        assert!((&acc - &sigma).abs().max() < 0.03, "{acc}");
    }
}
