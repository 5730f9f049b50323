//! Safety cautions: a board whose net classes declare hazardous voltages, or currents that
//! need wide tracks, gets a visible caution beside its pictures and files (the window
//! shows it above the board, `lehr export` prints it).

use crate::model::Design;
use crate::model::board::NetClass;

/// Voltages above this (DC or AC peak, V) are treated as hazardous: the usual limit of
/// extra-low voltage for dry conditions (common practice).
pub const HAZARD_VOLTS: f64 = 30.0;

/// Currents at or above this (A) count as high whatever the track width.
pub const HIGH_AMPS: f64 = 3.0;

/// Track width in mm an outer layer needs for `amps` at `rise` degrees C with `oz` copper,
/// by IPC-2221: I = 0.048 dT^0.44 A^0.725 (A in square mils), width = A / thickness, 1 oz
/// copper being 1.378 mil thick.
pub fn ipc2221_outer_width_mm(amps: f64, rise: f64, oz: f64) -> f64 {
    let area_mil2 = (amps / (0.048 * rise.powf(0.44))).powf(1.0 / 0.725);
    let width_mil = area_mil2 / (1.378 * oz);
    width_mil * 0.0254
}

/// The reason a net class calls for a caution, if it does.
fn class_caution(c: &NetClass, copper_oz: f64) -> Option<String> {
    let mut why = Vec::new();
    if let Some(v) = c.voltage
        && v > HAZARD_VOLTS
    {
        why.push(format!("{v} V"));
    }
    if let Some(a) = c.current
        && a > 0.0
    {
        let need = ipc2221_outer_width_mm(a, c.temp_rise.unwrap_or(10.0), copper_oz);
        if a >= HIGH_AMPS || need > c.track_width {
            why.push(format!(
                "{a} A (IPC-2221 asks for {need:.2} mm outer tracks, the class has {} mm)",
                c.track_width
            ));
        }
    }
    (!why.is_empty()).then(|| format!("net class {}: {}", c.name, why.join(", ")))
}

/// The caution to show for a board, or `None` when no net class calls for one.
pub fn caution(design: &Design) -> Option<String> {
    let oz = design.board.rules.copper_oz;
    let reasons: Vec<String> = design
        .board
        .classes
        .iter()
        .filter_map(|c| class_caution(c, oz))
        .collect();
    if reasons.is_empty() {
        return None;
    }
    Some(format!(
        "Caution: {}. Clearances and track widths must follow IPC-2221 and your local codes; \
         boards connected to mains need review by a licensed professional.",
        reasons.join("; ")
    ))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn class(voltage: Option<f64>, current: Option<f64>, width: f64) -> NetClass {
        NetClass {
            name: "power".into(),
            track_width: width,
            clearance: 0.3,
            current,
            voltage,
            temp_rise: None,
        }
    }

    #[test]
    fn widths_match_the_ipc2221_worked_values() {
        // ../shared/CHECK-VALUES.md, IPC-2221 conductors: 1 A, 10 C rise, 1 oz, outer
        // layer needs 0.300 mm; at 20 C rise, 0.197 mm.
        assert!((ipc2221_outer_width_mm(1.0, 10.0, 1.0) - 0.300).abs() < 0.001);
        assert!((ipc2221_outer_width_mm(1.0, 20.0, 1.0) - 0.197).abs() < 0.001);
    }

    #[test]
    fn which_classes_call_for_a_caution() {
        assert!(class_caution(&class(Some(24.0), None, 0.25), 1.0).is_none());
        assert!(
            class_caution(&class(Some(48.0), None, 0.25), 1.0)
                .unwrap()
                .contains("48 V")
        );
        // 1 A needs 0.30 mm: a 0.25 mm class is too narrow, a 0.35 mm class is fine.
        assert!(
            class_caution(&class(None, Some(1.0), 0.25), 1.0)
                .unwrap()
                .contains("1 A")
        );
        assert!(class_caution(&class(None, Some(1.0), 0.35), 1.0).is_none());
        // High currents always call for one.
        assert!(class_caution(&class(None, Some(5.0), 10.0), 1.0).is_some());
    }

    #[test]
    fn a_mains_board_gets_the_full_caution() {
        let mut board = crate::place::generate::grid_board(2, 2.54, 1);
        board.classes.push(class(Some(325.0), None, 0.5));
        let design = crate::model::resolve(board).expect("valid");
        let text = caution(&design).expect("a caution");
        assert!(text.contains("IPC-2221"));
        assert!(text.contains("licensed"));
        assert!(text.contains("325 V"));
    }
}
