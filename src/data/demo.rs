//! The demo scenario, invented for this project: Fernhollow Parcel Co-op, a
//! fictional delivery cooperative, scores each parcel with the probability
//! that it arrives late. Its model was trained elsewhere; candor is asked
//! whether a predicted 0.8 means 8 late parcels in 10.
//!
//! The data are synthetic and the truth is known. Each parcel has a region
//! (north, south, east, west, equally likely), a distance of 1 to 40 km and
//! rain with probability 0.3; its true log-odds of being late are
//! -2.2 + 0.06 distance + 1.1 rain + a region effect (north +0.6, south
//! -0.2, east 0, west +0.1). The co-op's model is over-confident (it
//! stretches the log-odds by 1.5) and does not know about the north's
//! extra delay: it predicts sigmoid(1.5 (L - north effect) + 0.1). So the
//! demo can put the true calibration error beside candor's estimate.

use crate::common::math::sigmoid;
use crate::common::rng::SplitMix64;

/// One parcel.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Parcel {
    pub late: bool,
    pub region: usize,
    pub distance_km: f64,
    pub rain: bool,
    /// The co-op model's predicted probability of being late.
    pub predicted: f64,
    /// The true probability.
    pub truth: f64,
}

pub const REGIONS: [&str; 4] = ["north", "south", "east", "west"];
const REGION_EFFECT: [f64; 4] = [0.6, -0.2, 0.0, 0.1];

fn parcel(rng: &mut SplitMix64) -> Parcel {
    let region = rng.below(4);
    let distance = 1.0 + 39.0 * rng.unit();
    let rain = if rng.unit() < 0.3 { 1.0 } else { 0.0 };
    let logit = -2.2 + 0.06 * distance + 1.1 * rain + REGION_EFFECT[region];
    let known = logit - if region == 0 { REGION_EFFECT[0] } else { 0.0 };
    let truth = sigmoid(logit);
    Parcel {
        late: rng.unit() < truth,
        region,
        distance_km: distance,
        rain: rain > 0.0,
        predicted: sigmoid(1.5 * known + 0.1),
        truth,
    }
}

/// A demo sample.
pub struct Demo {
    pub parcels: Vec<Parcel>,
}

/// Draws `n` parcels.
pub fn generate(n: usize, seed: u64) -> Demo {
    let mut rng = SplitMix64::new(seed);
    Demo {
        parcels: (0..n).map(|_| parcel(&mut rng)).collect(),
    }
}

impl Demo {
    /// The predictions file the co-op would hand over: `late` (0/1),
    /// `region`, `p_late`.
    pub fn csv(&self) -> String {
        let mut s = String::from("late,region,p_late\n");
        for p in &self.parcels {
            s.push_str(&format!(
                "{},{},{}\n",
                u8::from(p.late),
                REGIONS[p.region],
                p.predicted
            ));
        }
        s
    }
}

impl Demo {
    /// The parcels' own records, for training families on: `region`,
    /// `distance_km` (one decimal), `rain` (yes/no) and `late` (yes/no).
    pub fn features_csv(&self) -> String {
        let mut s = String::from("region,distance_km,rain,late\n");
        for p in &self.parcels {
            let yes = |b: bool| if b { "yes" } else { "no" };
            s.push_str(&format!(
                "{},{:.1},{},{}\n",
                REGIONS[p.region],
                p.distance_km,
                yes(p.rain),
                yes(p.late)
            ));
        }
        s
    }
}

/// The equal-width bin of a probability, right-closed with the first bin
/// also holding 0, as the ECE metric bins.
fn bin(p: f64, bins: usize) -> usize {
    ((p * bins as f64).ceil() as usize)
        .saturating_sub(1)
        .min(bins - 1)
}

/// The model's true ECE with `bins` equal-width bins: the expected value
/// over parcels of |E[truth | bin] - E[predicted | bin]|, by Monte Carlo
/// over 2,000,000 parcels using the true probabilities (not sampled
/// outcomes), so its own error is about 1e-4.
pub fn true_ece(bins: usize) -> f64 {
    let demo = generate(2_000_000, 0x0074_7275_7468);
    let mut n = vec![0.0; bins];
    let mut t = vec![0.0; bins];
    let mut p = vec![0.0; bins];
    for x in &demo.parcels {
        let b = bin(x.predicted, bins);
        n[b] += 1.0;
        t[b] += x.truth;
        p[b] += x.predicted;
    }
    let total: f64 = n.iter().sum();
    (0..bins)
        .filter(|&b| n[b] > 0.0)
        .map(|b| (t[b] - p[b]).abs() / total)
        .sum()
}
