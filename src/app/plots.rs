//! The plots panel: energy (total, best so far and each weighted term), temperature and
//! acceptance rate against moves, on one shared move axis; and the acceptance probability
//! exp(-dE/T) against dE at the current temperature, to show what the temperature does.

use egui::Color32;
use egui_plot::{Legend, Line, Plot, PlotPoints};

use lehr_engine::worker::Snapshot;

use super::history::History;

/// The plots panel: the run's samples and nothing else.
#[derive(Debug)]
pub struct Plots {
    pub history: History,
}

impl Default for Plots {
    fn default() -> Self {
        Plots {
            history: History::new(),
        }
    }
}

/// Curve colours, readable on both themes.
const TOTAL: Color32 = Color32::from_rgb(0x3c, 0x9c, 0xe6);
const BEST: Color32 = Color32::from_rgb(0x2e, 0xb8, 0x6a);
const WIRE: Color32 = Color32::from_rgb(0xd8, 0x96, 0x2c);
const OVERLAP: Color32 = Color32::from_rgb(0xd6, 0x4c, 0x4c);
const OUTSIDE: Color32 = Color32::from_rgb(0xa8, 0x6c, 0xd8);
const KEEPOUT: Color32 = Color32::from_rgb(0x5a, 0x7c, 0xa8);
const TEMP: Color32 = Color32::from_rgb(0xe0, 0x6c, 0x2c);
const ACCEPT: Color32 = Color32::from_rgb(0x4a, 0xae, 0xb0);

impl Plots {
    pub fn ui(&mut self, ui: &mut egui::Ui, snap: Option<&Snapshot>) {
        let h = &self.history;
        let link = egui::Id::unique("lehr-move-axis");
        let plot_h = ((ui.available_height() - 140.0) / 3.4).max(80.0);
        let w = snap.and_then(|s| s.weights);

        ui.label("Energy against moves");
        Plot::new("energy")
            .height(plot_h)
            .link_axis(link, [true, false])
            .link_cursor(link, [true, false])
            .legend(Legend::default())
            .y_axis_min_width(48.0)
            .show(ui, |p| {
                p.line(Line::new("energy", PlotPoints::from(h.series(|s| s.energy))).color(TOTAL));
                p.line(
                    Line::new("best so far", PlotPoints::from(h.series(|s| s.best))).color(BEST),
                );
                if let Some(w) = w {
                    p.line(
                        Line::new(
                            "wirelength",
                            PlotPoints::from(h.series(|s| w.wirelength * s.terms.wirelength)),
                        )
                        .color(WIRE),
                    );
                    p.line(
                        Line::new(
                            "overlap",
                            PlotPoints::from(h.series(|s| w.overlap * s.terms.overlap)),
                        )
                        .color(OVERLAP),
                    );
                    p.line(
                        Line::new(
                            "outside",
                            PlotPoints::from(h.series(|s| w.outside * s.terms.outside)),
                        )
                        .color(OUTSIDE),
                    );
                    p.line(
                        Line::new(
                            "keep-out",
                            PlotPoints::from(h.series(|s| w.keepout * s.terms.keepout)),
                        )
                        .color(KEEPOUT),
                    );
                }
            });

        ui.label("Temperature against moves");
        Plot::new("temperature")
            .height(plot_h * 0.7)
            .link_axis(link, [true, false])
            .link_cursor(link, [true, false])
            .y_axis_min_width(48.0)
            .include_y(0.0)
            .show(ui, |p| {
                p.line(Line::new("T", PlotPoints::from(h.series(|s| s.temperature))).color(TEMP));
            });

        ui.label("Acceptance rate against moves");
        Plot::new("acceptance")
            .height(plot_h * 0.7)
            .link_axis(link, [true, false])
            .link_cursor(link, [true, false])
            .y_axis_min_width(48.0)
            .include_y(0.0)
            .include_y(1.0)
            .show(ui, |p| {
                p.line(
                    Line::new("accepted", PlotPoints::from(h.series(|s| s.acceptance)))
                        .color(ACCEPT),
                );
            });

        // exp(-dE/T) for dE from 0 to three start temperatures: as T falls the curve
        // collapses toward the axis, and uphill moves stop being taken.
        let (t, t0) = snap.map_or((0.0, 0.0), |s| (s.temperature, s.start_temperature));
        ui.label(format!(
            "Chance to accept an uphill move, exp(-dE/T), at T = {}",
            super::controls::sig(t)
        ));
        let span = if t0 > 0.0 { 3.0 * t0 } else { 1.0 };
        let curve = |temp: f64| -> Vec<[f64; 2]> {
            (0..=120)
                .map(|i| {
                    let de = span * f64::from(i) / 120.0;
                    let p = if temp > 0.0 {
                        (-de / temp).exp()
                    } else if de == 0.0 {
                        1.0
                    } else {
                        0.0
                    };
                    [de, p]
                })
                .collect()
        };
        Plot::new("metropolis")
            .height(plot_h * 0.8)
            .y_axis_min_width(48.0)
            .include_y(0.0)
            .include_y(1.0)
            .x_axis_label("dE")
            .legend(Legend::default())
            .show(ui, |p| {
                p.line(
                    Line::new("at the start temperature", PlotPoints::from(curve(t0)))
                        .color(Color32::from_rgb(0x90, 0x90, 0x90)),
                );
                p.line(
                    Line::new("now", PlotPoints::from(curve(t)))
                        .color(TEMP)
                        .width(2.0),
                );
            });
    }
}
