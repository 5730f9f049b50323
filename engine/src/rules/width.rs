//! Conductor sizing after IPC-2221 (Generic Standard on Printed Board Design): the track
//! width a current needs for a given temperature rise, and the spacing a voltage needs.
//!
//! Current capacity (IPC-2221, section 6.2): `I = k · dT^0.44 · A^0.725`, with `I` in
//! amperes, `dT` the temperature rise in degrees C, `A` the cross-section in square mils,
//! `k = 0.048` on outer layers and `0.024` on inner layers. The width is the area divided
//! by the copper thickness (1 oz/ft² is 1.378 mil, 0.035 mm).
//!
//! Spacing: IPC-2221 Table 6-1, columns B1 (inner layers), B2 (outer layers, uncoated, up
//! to 3050 m altitude) and B4 (outer layers with a permanent polymer coating). lehr's
//! boards have two outer copper layers and no coating is modelled, so the checker uses
//! column B2 ([`BOARD_SPACING`]).
//!
//! IPC-2152 (2009) replaced the 2221 current charts with newer measurements and has no
//! official closed formula; these figures are a first estimate, not a rating. Anything
//! connected to mains needs the local safety standard and a licensed review: see
//! [`SAFETY_NOTE`].

use serde::{Deserialize, Serialize};

/// IPC-2221 constant `k` for outer layers.
pub const K_OUTER: f64 = 0.048;
/// IPC-2221 constant `k` for inner layers.
pub const K_INNER: f64 = 0.024;
/// Thickness of 1 oz/ft² copper in mils.
pub const MIL_PER_OZ: f64 = 1.378;
/// One mil (a thousandth of an inch) in millimetres.
pub const MM_PER_MIL: f64 = 0.0254;
/// Temperature rise assumed when a net class gives none, in degrees C.
pub const DEFAULT_TEMP_RISE_C: f64 = 10.0;

/// What lehr says next to any voltage-based figure: the table is a design aid only.
pub const SAFETY_NOTE: &str = "IPC-2221 spacing is a design aid only; anything connected to \
mains needs the local safety standard and a licensed review";

/// Where a conductor runs: outer layers shed heat to the air and carry twice the current.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub enum LayerPosition {
    /// Top or bottom copper (`k = 0.048`).
    Outer,
    /// Copper inside a multilayer board (`k = 0.024`).
    Inner,
}

impl LayerPosition {
    /// The formula's constant `k` for this position.
    pub fn k(self) -> f64 {
        match self {
            LayerPosition::Outer => K_OUTER,
            LayerPosition::Inner => K_INNER,
        }
    }
}

/// Cross-section in square mils needed to carry `current_a` amperes with a rise of
/// `temp_rise_c` degrees C: the IPC-2221 formula solved for `A`.
pub fn required_area_mil2(current_a: f64, temp_rise_c: f64, position: LayerPosition) -> f64 {
    (current_a / (position.k() * temp_rise_c.powf(0.44))).powf(1.0 / 0.725)
}

/// Track width in mm that carries `current_a` with a rise of `temp_rise_c` on copper of
/// `copper_oz` ounces per square foot.
pub fn required_width_mm(
    current_a: f64,
    temp_rise_c: f64,
    copper_oz: f64,
    position: LayerPosition,
) -> f64 {
    let thickness_mil = MIL_PER_OZ * copper_oz;
    required_area_mil2(current_a, temp_rise_c, position) / thickness_mil * MM_PER_MIL
}

/// The inverse: the current in A a track of `width_mm` carries with a rise of
/// `temp_rise_c` on copper of `copper_oz`.
pub fn current_capacity_a(
    width_mm: f64,
    temp_rise_c: f64,
    copper_oz: f64,
    position: LayerPosition,
) -> f64 {
    let area_mil2 = width_mm / MM_PER_MIL * MIL_PER_OZ * copper_oz;
    position.k() * temp_rise_c.powf(0.44) * area_mil2.powf(0.725)
}

/// A column of IPC-2221 Table 6-1: which conductors the spacing applies to.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub enum SpacingClass {
    /// B1: internal conductors.
    B1InnerLayers,
    /// B2: external conductors, uncoated, sea level to 3050 m.
    B2OuterUncoated,
    /// B4: external conductors with a permanent polymer coating.
    B4OuterCoated,
}

/// The column lehr's checker uses: two outer layers, no coating modelled.
pub const BOARD_SPACING: SpacingClass = SpacingClass::B2OuterUncoated;

/// IPC-2221 Table 6-1 rows: highest voltage of the row (DC or AC peak) and the minimum
/// spacing in mm for B1, B2, B4. Read from a derived table, not the standard itself; the
/// 301-500 V row is from memory (see ../shared/CHECK-VALUES.md).
const SPACING_ROWS: [(f64, [f64; 3]); 9] = [
    (15.0, [0.05, 0.1, 0.05]),
    (30.0, [0.05, 0.1, 0.05]),
    (50.0, [0.1, 0.6, 0.13]),
    (100.0, [0.1, 0.6, 0.13]),
    (150.0, [0.2, 0.6, 0.4]),
    (170.0, [0.2, 1.25, 0.4]),
    (250.0, [0.2, 1.25, 0.4]),
    (300.0, [0.2, 1.25, 0.4]),
    (500.0, [0.25, 2.5, 0.8]),
];

/// Extra spacing per volt above 500 V, in mm, added to the 500 V row (from memory).
const SPACING_PER_VOLT_ABOVE_500: [f64; 3] = [0.0025, 0.005, 0.00305];

impl SpacingClass {
    fn column(self) -> usize {
        match self {
            SpacingClass::B1InnerLayers => 0,
            SpacingClass::B2OuterUncoated => 1,
            SpacingClass::B4OuterCoated => 2,
        }
    }
}

/// Minimum spacing in mm between conductors `volts` apart (DC or AC peak).
///
/// The table's rows are written in whole volts (0-15, 16-30, ...); a voltage between two
/// rows takes the higher row. Above 500 V the per-volt figure is added to the 500 V row
/// for every volt above 500.
pub fn clearance_for_voltage_mm(volts: f64, class: SpacingClass) -> f64 {
    let col = class.column();
    let v = volts.abs();
    for (upper, row) in SPACING_ROWS {
        if v <= upper {
            return row[col];
        }
    }
    let top = SPACING_ROWS[SPACING_ROWS.len() - 1];
    top.1[col] + (v - top.0) * SPACING_PER_VOLT_ABOVE_500[col]
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn width_and_capacity_are_inverse() {
        for &(i, dt, oz) in &[(0.5, 10.0, 1.0), (3.0, 20.0, 2.0), (10.0, 30.0, 0.5)] {
            for pos in [LayerPosition::Outer, LayerPosition::Inner] {
                let w = required_width_mm(i, dt, oz, pos);
                let back = current_capacity_a(w, dt, oz, pos);
                assert!((back - i).abs() < 1e-9 * i, "{i} A -> {w} mm -> {back} A");
            }
        }
    }

    #[test]
    fn spacing_rows_take_the_higher_row_between_whole_volts() {
        let b2 = SpacingClass::B2OuterUncoated;
        assert_eq!(clearance_for_voltage_mm(15.0, b2), 0.1);
        assert_eq!(clearance_for_voltage_mm(15.5, b2), 0.1);
        assert_eq!(clearance_for_voltage_mm(30.5, b2), 0.6);
        assert_eq!(clearance_for_voltage_mm(-48.0, b2), 0.6);
    }
}
