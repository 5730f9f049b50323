//! The standard package families behind [`FootprintSpec`]: pad geometry by package.
//! (Being filled in; see the footprint tests.)

use super::footprint::{
    COURTYARD_EXCESS, Footprint, FootprintError, FootprintSpec, Pad, PadKind, PadShape,
};
use super::geom::{Point, Rect};

pub(crate) fn build_package(spec: &FootprintSpec) -> Result<Footprint, FootprintError> {
    match spec {
        FootprintSpec::Chip(code) => {
            let (l, w) = match code.as_str() {
                "0402" => (1.0, 0.5),
                "0603" => (1.6, 0.8),
                "0805" => (2.0, 1.25),
                "1206" => (3.2, 1.6),
                "1210" => (3.2, 2.5),
                "2512" => (6.4, 3.2),
                _ => return Err(FootprintError::UnknownChipSize(code.clone())),
            };
            let pw = l * 0.45;
            let ph = w * 1.1;
            let dx = l / 2.0;
            let pads = ["1", "2"]
                .iter()
                .zip([-dx, dx])
                .map(|(n, x)| Pad {
                    number: (*n).into(),
                    at: Point::new(x, 0.0),
                    width: pw,
                    height: ph,
                    shape: PadShape::RoundRect,
                    kind: PadKind::Smd,
                })
                .collect::<Vec<_>>();
            let body = Rect::centered(Point::new(0.0, 0.0), l, w);
            let ext = pads.iter().fold(body, |r, p| r.union(&p.rect()));
            Ok(Footprint {
                name: code.clone(),
                pads,
                body,
                courtyard: ext.inflate(COURTYARD_EXCESS),
            })
        }
        _ => Err(FootprintError::BadCustom(
            "package not yet available".into(),
        )),
    }
}
