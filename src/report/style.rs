//! The look of candor's figures: each calibration method keeps one colour,
//! one dash pattern and one marker shape in every figure of every report,
//! so a reader learns them once, and a figure printed in grey still reads.
//!
//! The colours were chosen by a max-min search of our own over an sRGB grid
//! (lightness 35 to 72 so every line shows on white), starting from a
//! near-black for the raw model: each next colour is the one farthest, in
//! CIELAB distance, from those already chosen, as seen with normal vision
//! and under simulated protanopia, deuteranopia and tritanopia (the
//! Machado, Oliveira & Fernandes 2009 matrices at full severity). Their
//! smallest distance under any of the four is above 35; the unit test
//! recomputes it.

use crate::calibrate;
use plotters::style::RGBColor;

/// Method colours, in the order of `calibrate::METHODS` (none, platt,
/// isotonic, histogram, beta, temperature, venn_abers).
const PALETTE: [RGBColor; 7] = [
    RGBColor(0x22, 0x22, 0x22),
    RGBColor(0xff, 0x88, 0x00),
    RGBColor(0x33, 0xbb, 0xff),
    RGBColor(0xaa, 0x99, 0x88),
    RGBColor(0x33, 0x22, 0xff),
    RGBColor(0xbb, 0x00, 0x00),
    RGBColor(0x88, 0x33, 0x88),
];

/// Dash length and gap in pixels; `None` is a solid line.
const DASHES: [Option<(u32, u32)>; 7] = [
    None,
    Some((10, 4)),
    Some((4, 3)),
    Some((14, 3)),
    Some((2, 3)),
    Some((7, 7)),
    Some((18, 6)),
];

/// A marker shape.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Marker {
    Circle,
    Square,
    TriangleUp,
    Diamond,
    TriangleDown,
    Cross,
    Plus,
}

const MARKERS: [Marker; 7] = [
    Marker::Circle,
    Marker::Square,
    Marker::TriangleUp,
    Marker::Diamond,
    Marker::TriangleDown,
    Marker::Cross,
    Marker::Plus,
];

/// How one method is drawn.
#[derive(Debug, Clone, Copy)]
pub struct MethodStyle {
    pub colour: RGBColor,
    pub dash: Option<(u32, u32)>,
    pub marker: Marker,
}

/// The style of a method, the same in every figure.
pub fn of(method: &str) -> MethodStyle {
    let i = calibrate::METHODS
        .iter()
        .position(|m| m.name == method)
        .unwrap_or(0);
    MethodStyle {
        colour: PALETTE[i % PALETTE.len()],
        dash: DASHES[i % DASHES.len()],
        marker: MARKERS[i % MARKERS.len()],
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// sRGB (0-255) to linear light.
    fn linear(c: u8) -> f64 {
        let c = f64::from(c) / 255.0;
        if c <= 0.04045 {
            c / 12.92
        } else {
            ((c + 0.055) / 1.055).powf(2.4)
        }
    }

    /// Linear sRGB to CIELAB (D65).
    fn lab(rgb: [f64; 3]) -> [f64; 3] {
        let [r, g, b] = rgb;
        let x = (0.4124 * r + 0.3576 * g + 0.1805 * b) / 0.95047;
        let y = 0.2126 * r + 0.7152 * g + 0.0722 * b;
        let z = (0.0193 * r + 0.1192 * g + 0.9505 * b) / 1.08883;
        let f = |t: f64| {
            if t > 0.008856 {
                t.cbrt()
            } else {
                7.787 * t + 16.0 / 116.0
            }
        };
        [
            116.0 * f(y) - 16.0,
            500.0 * (f(x) - f(y)),
            200.0 * (f(y) - f(z)),
        ]
    }

    #[test]
    fn the_palette_stays_distinct_for_colour_blind_readers() {
        // Machado, Oliveira & Fernandes (2009), "A physiologically-based
        // model for simulation of color vision deficiency", IEEE TVCG 15(6),
        // severity 1.0 matrices on linear RGB (entries from memory of the
        // paper's table).
        let simulations: [[[f64; 3]; 3]; 4] = [
            [[1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]],
            [
                [0.152286, 1.052583, -0.204868],
                [0.114503, 0.786281, 0.099216],
                [-0.003882, -0.048116, 1.051998],
            ],
            [
                [0.367322, 0.860646, -0.227968],
                [0.280085, 0.672501, 0.047413],
                [-0.011820, 0.042940, 0.968881],
            ],
            [
                [1.255528, -0.076749, -0.178779],
                [-0.078411, 0.930809, 0.147602],
                [0.004733, 0.691367, 0.303900],
            ],
        ];
        let mut smallest = f64::INFINITY;
        for m in &simulations {
            let seen: Vec<[f64; 3]> = PALETTE
                .iter()
                .map(|c| {
                    let v = [linear(c.0), linear(c.1), linear(c.2)];
                    let s: Vec<f64> = (0..3)
                        .map(|i| (0..3).map(|j| m[i][j] * v[j]).sum::<f64>().clamp(0.0, 1.0))
                        .collect();
                    lab([s[0], s[1], s[2]])
                })
                .collect();
            for i in 0..seen.len() {
                for j in i + 1..seen.len() {
                    let d = (0..3)
                        .map(|k| (seen[i][k] - seen[j][k]).powi(2))
                        .sum::<f64>()
                        .sqrt();
                    smallest = smallest.min(d);
                }
            }
        }
        // A CIELAB distance of about 10 is a clear difference side by side
        // (common practice); 35 leaves room for small markers and thin lines.
        assert!(smallest > 35.0, "{smallest}");
    }

    #[test]
    fn every_method_has_its_own_colour_dash_and_marker() {
        let styles: Vec<MethodStyle> = calibrate::METHODS.iter().map(|m| of(m.name)).collect();
        for i in 0..styles.len() {
            for j in i + 1..styles.len() {
                assert_ne!(styles[i].colour, styles[j].colour);
                assert_ne!(styles[i].dash, styles[j].dash);
                assert_ne!(styles[i].marker, styles[j].marker);
            }
        }
    }
}
