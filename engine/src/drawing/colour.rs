//! Colours of the board picture: a colour type of our own (no user-interface crate in the
//! engine) and the two palettes.

/// An sRGB colour with opacity, kept premultiplied (each channel already multiplied by
/// the opacity), as the pictures blend it: a pen hands these bytes to its pixels as they
/// are. Made from straight values by [`Colour::rgb`] and [`Colour::rgba`]; for a
/// translucent colour [`Colour::unmultiplied`] gives them back rounded, so they may differ
/// from the ones it was made from by one.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Hash)]
pub struct Colour {
    r: u8,
    g: u8,
    b: u8,
    a: u8,
}

impl Colour {
    /// Fully transparent.
    pub const TRANSPARENT: Colour = Colour::premultiplied(0, 0, 0, 0);

    /// An opaque colour.
    pub const fn rgb(r: u8, g: u8, b: u8) -> Colour {
        Colour { r, g, b, a: 255 }
    }

    /// A colour from straight (not premultiplied) channels and an opacity `a` (255 is
    /// opaque).
    pub const fn rgba(r: u8, g: u8, b: u8, a: u8) -> Colour {
        match a {
            0 => Colour::TRANSPARENT,
            255 => Colour::rgb(r, g, b),
            a => Colour {
                r: mul_frac(r, a),
                g: mul_frac(g, a),
                b: mul_frac(b, a),
                a,
            },
        }
    }

    /// A colour from premultiplied channels (each at most `a`).
    pub const fn premultiplied(r: u8, g: u8, b: u8, a: u8) -> Colour {
        Colour { r, g, b, a }
    }

    /// The premultiplied channels, red, green, blue, opacity.
    pub const fn to_premultiplied(self) -> [u8; 4] {
        [self.r, self.g, self.b, self.a]
    }

    /// The straight channels, red, green, blue, opacity (rounded for translucent colours).
    pub fn unmultiplied(self) -> [u8; 4] {
        match self.a {
            0 | 255 => self.to_premultiplied(),
            a => {
                let k = 255.0 / f32::from(a);
                let ch = |v: u8| (k * f32::from(v) + 0.5) as u8;
                [ch(self.r), ch(self.g), ch(self.b), a]
            }
        }
    }

    /// The opacity, 0 (transparent) to 255 (opaque).
    pub const fn alpha(self) -> u8 {
        self.a
    }

    /// The colour with every premultiplied channel (opacity too) times `factor`: fainter
    /// for a factor below 1, in sRGB terms.
    pub fn faded(self, factor: f32) -> Colour {
        let ch = |v: u8| (f32::from(v) * factor + 0.5) as u8;
        Colour {
            r: ch(self.r),
            g: ch(self.g),
            b: ch(self.b),
            a: ch(self.a),
        }
    }
}

/// `v * a / 255`, rounded, in integers.
const fn mul_frac(v: u8, a: u8) -> u8 {
    let p = (v as u16) * (a as u16) + 128;
    ((p + (p >> 8)) >> 8) as u8
}

/// Colours of the board picture. Chosen for lehr: a dark-green board on the dark theme, a
/// pale sage board on the light one; copper of the top side in warm gold and copper
/// orange, the bottom side in teal (its pads and, a shade apart, its tracks), wiring still
/// to do in grey, conflicts in red, the selection in yellow. Every colour of a palette is
/// distinct, so a picture can be read by colour alone.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Palette {
    pub background: Colour,
    pub board: Colour,
    pub outline: Colour,
    pub keepout_fill: Colour,
    pub keepout_edge: Colour,
    pub courtyard: Colour,
    pub courtyard_fill: Colour,
    pub locked_fill: Colour,
    pub locked_edge: Colour,
    pub body: Colour,
    pub pad_top: Colour,
    pub pad_bottom: Colour,
    pub drill: Colour,
    pub unrouted: Colour,
    pub highlight: Colour,
    pub conflict: Colour,
    pub selected: Colour,
    pub hovered: Colour,
    pub label: Colour,
    pub track_top: Colour,
    pub track_bottom: Colour,
    pub via: Colour,
}

impl Palette {
    /// For the dark theme.
    pub fn dark() -> Palette {
        Palette {
            background: Colour::rgb(0x16, 0x19, 0x1c),
            board: Colour::rgb(0x1c, 0x2e, 0x25),
            outline: Colour::rgb(0xc9, 0xd3, 0xbf),
            keepout_fill: Colour::rgba(0xd0, 0x5a, 0x44, 40),
            keepout_edge: Colour::rgb(0xd8, 0x6e, 0x58),
            courtyard: Colour::rgb(0x8a, 0x98, 0xa6),
            courtyard_fill: Colour::rgba(0x9a, 0xa8, 0xb4, 22),
            locked_fill: Colour::rgba(0x6e, 0x8c, 0xe6, 60),
            locked_edge: Colour::rgb(0x8e, 0xaa, 0xf5),
            body: Colour::rgb(0x5c, 0x66, 0x70),
            pad_top: Colour::rgb(0xd8, 0xa6, 0x48),
            pad_bottom: Colour::rgb(0x3f, 0xb0, 0xaa),
            drill: Colour::rgb(0x10, 0x12, 0x14),
            unrouted: Colour::rgba(0xe6, 0xe6, 0xdc, 110),
            highlight: Colour::rgb(0x62, 0xd6, 0xff),
            conflict: Colour::rgb(0xff, 0x55, 0x50),
            selected: Colour::rgb(0xff, 0xdc, 0x4a),
            hovered: Colour::rgb(0xee, 0xf2, 0xf4),
            label: Colour::rgb(0xe4, 0xe8, 0xe0),
            track_top: Colour::rgba(0xd9, 0x74, 0x4c, 210),
            // A deeper sea green than the bottom pads, so pads stand out on their tracks.
            track_bottom: Colour::rgba(0x2a, 0x8c, 0x77, 190),
            via: Colour::rgb(0xb8, 0xbc, 0xc0),
        }
    }

    /// For the light theme.
    pub fn light() -> Palette {
        Palette {
            background: Colour::rgb(0xf3, 0xf4, 0xf1),
            board: Colour::rgb(0xdc, 0xe8, 0xd8),
            outline: Colour::rgb(0x2f, 0x42, 0x33),
            keepout_fill: Colour::rgba(0xc8, 0x3c, 0x28, 40),
            keepout_edge: Colour::rgb(0xb0, 0x3a, 0x28),
            courtyard: Colour::rgb(0x55, 0x60, 0x6c),
            courtyard_fill: Colour::rgba(0xff, 0xff, 0xff, 90),
            locked_fill: Colour::rgba(0x3c, 0x5c, 0xc8, 50),
            locked_edge: Colour::rgb(0x2c, 0x48, 0xa8),
            body: Colour::rgb(0x8a, 0x94, 0x9c),
            pad_top: Colour::rgb(0xb4, 0x7a, 0x12),
            pad_bottom: Colour::rgb(0x14, 0x84, 0x80),
            drill: Colour::rgb(0xfa, 0xfa, 0xf6),
            unrouted: Colour::rgba(0x30, 0x34, 0x38, 120),
            highlight: Colour::rgb(0x00, 0x6c, 0xd8),
            conflict: Colour::rgb(0xd2, 0x1e, 0x28),
            selected: Colour::rgb(0xc8, 0x8c, 0x00),
            hovered: Colour::rgb(0x10, 0x14, 0x18),
            label: Colour::rgb(0x1c, 0x22, 0x26),
            track_top: Colour::rgba(0xc0, 0x50, 0x28, 200),
            // A deeper sea green than the bottom pads, dark on the pale board.
            track_bottom: Colour::rgba(0x0a, 0x54, 0x45, 180),
            via: Colour::rgb(0x60, 0x66, 0x6c),
        }
    }

    /// Every colour with its field's name (tests, and anyone checking a palette).
    pub fn named(&self) -> [(&'static str, Colour); 22] {
        [
            ("background", self.background),
            ("board", self.board),
            ("outline", self.outline),
            ("keepout_fill", self.keepout_fill),
            ("keepout_edge", self.keepout_edge),
            ("courtyard", self.courtyard),
            ("courtyard_fill", self.courtyard_fill),
            ("locked_fill", self.locked_fill),
            ("locked_edge", self.locked_edge),
            ("body", self.body),
            ("pad_top", self.pad_top),
            ("pad_bottom", self.pad_bottom),
            ("drill", self.drill),
            ("unrouted", self.unrouted),
            ("highlight", self.highlight),
            ("conflict", self.conflict),
            ("selected", self.selected),
            ("hovered", self.hovered),
            ("label", self.label),
            ("track_top", self.track_top),
            ("track_bottom", self.track_bottom),
            ("via", self.via),
        ]
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn premultiplying_rounds_and_comes_back_within_one() {
        assert_eq!(
            Colour::rgba(255, 128, 0, 128).to_premultiplied(),
            [128, 64, 0, 128]
        );
        assert_eq!(Colour::rgba(9, 9, 9, 0), Colour::TRANSPARENT);
        assert_eq!(
            Colour::rgba(1, 2, 3, 255).to_premultiplied(),
            [1, 2, 3, 255]
        );
        for a in [1u8, 22, 40, 90, 128, 200, 254] {
            for v in (0..=255u8).step_by(5) {
                let back = Colour::rgba(v, v, v, a).unmultiplied();
                // At opacity a, straight values closer than 255 / a fall together.
                let tol = (255.0 / f32::from(a)).ceil() as i32;
                assert!((i32::from(back[0]) - i32::from(v)).abs() <= tol, "{v} {a}");
                assert_eq!(back[3], a);
            }
        }
        assert_eq!(
            Colour::rgba(200, 100, 50, 100).faded(0.5).alpha(),
            50,
            "faded scales the opacity"
        );
    }

    /// The straight channels of a colour, for comparing hues.
    fn rgb(c: Colour) -> [f64; 3] {
        let [r, g, b, _] = c.unmultiplied();
        [f64::from(r), f64::from(g), f64::from(b)]
    }

    /// The hue in degrees and the lightness (0 to 1) of a colour.
    fn hue_lightness(c: Colour) -> (f64, f64) {
        let [r, g, b] = rgb(c).map(|v| v / 255.0);
        let (max, min) = (r.max(g).max(b), r.min(g).min(b));
        let d = max - min;
        let h = if d == 0.0 {
            0.0
        } else if max == r {
            60.0 * ((g - b) / d).rem_euclid(6.0)
        } else if max == g {
            60.0 * ((b - r) / d + 2.0)
        } else {
            60.0 * ((r - g) / d + 4.0)
        };
        (h, (max + min) / 2.0)
    }

    #[test]
    fn every_colour_of_a_palette_is_distinct() {
        for pal in [Palette::light(), Palette::dark()] {
            let c = pal.named();
            for (i, a) in c.iter().enumerate() {
                for b in &c[i + 1..] {
                    assert_ne!(a.1, b.1, "{} and {} share a colour", a.0, b.0);
                }
            }
        }
    }

    #[test]
    fn bottom_copper_is_teal_and_top_copper_is_warm() {
        for pal in [Palette::light(), Palette::dark()] {
            let (pad_hue, pad_l) = hue_lightness(pal.pad_bottom);
            let (track_hue, track_l) = hue_lightness(pal.track_bottom);
            // The teal family: between green and blue, near the bottom pads' hue.
            assert!((150.0..=190.0).contains(&track_hue), "{track_hue}");
            assert!((track_hue - pad_hue).abs() < 20.0, "{track_hue} {pad_hue}");
            // A shade apart from the pads, and from the vias and the board.
            assert!((track_l - pad_l).abs() > 0.1, "{track_l} {pad_l}");
            for other in [pal.via, pal.board, pal.background, pal.highlight] {
                let d: f64 = rgb(pal.track_bottom)
                    .iter()
                    .zip(rgb(other))
                    .map(|(a, b)| (a - b).powi(2))
                    .sum::<f64>()
                    .sqrt();
                assert!(d > 60.0, "{d}");
            }
            for warm in [pal.track_top, pal.pad_top] {
                let (h, _) = hue_lightness(warm);
                assert!((10.0..=45.0).contains(&h), "{h}");
            }
        }
    }
}
