//! Validation shared by the input files (circuits, benches): errors located
//! in the file, plausible ranges, and the wall of a tube or reference line.

use super::InputError;
use super::locate::KeyPath;
use crate::units::format_sig;
use crate::wall::{DEFAULT_POISSON_RATIO, Material, Wall};
use serde::Deserialize;

/// Result of a validation step.
pub(crate) type Res<T> = Result<T, InputError>;

/// The text of one input file, for located errors.
#[derive(Debug, Clone, Copy)]
pub(crate) struct FileCheck<'a> {
    /// The whole text.
    pub text: &'a str,
    /// The file as the user named it.
    pub file: &'a str,
}

/// The wall model a file asks for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
#[serde(rename_all = "snake_case")]
pub(crate) enum WallModel {
    /// Korteweg's thin-wall form.
    Thin,
    /// Lamé's thick-wall form (the default).
    Thick,
}

/// The wall keys of a tube, a silencer's tube or a bench's reference line,
/// in SI.
#[derive(Debug, Clone, Copy, Default)]
pub(crate) struct WallKeys<'r> {
    pub rigid: Option<bool>,
    pub wall: Option<f64>,
    pub material: Option<&'r str>,
    pub youngs_modulus: Option<f64>,
    pub poisson_ratio: Option<f64>,
    pub wall_model: Option<WallModel>,
}

impl FileCheck<'_> {
    /// An error at `path`, located in the file.
    pub fn err(&self, path: &KeyPath, message: impl Into<String>) -> InputError {
        InputError::located(self.file, self.text, path, message)
    }

    /// A value within [lo, hi] (SI), with a message naming the range.
    pub fn in_range(&self, path: &KeyPath, value: f64, lo: f64, hi: f64, unit: &str) -> Res<f64> {
        // a number without a unit has no space after it
        let u = if unit.is_empty() {
            String::new()
        } else {
            format!(" {unit}")
        };
        let v = format_sig(value, 6);
        if value <= 0.0 && lo > 0.0 {
            return Err(self.err(path, format!("must be greater than zero, found {v}{u}")));
        }
        if !(lo..=hi).contains(&value) {
            return Err(self.err(
                path,
                format!(
                    "{v}{u} is outside the plausible range {lo:e} .. {hi:e}{u}: check the unit (a bare number is SI)"
                ),
            ));
        }
        Ok(value)
    }

    /// A fraction (read from `2 %` or a bare `0.02`) within [lo, hi], with
    /// a message in per cent, as such values are written.
    pub fn percent_in_range(&self, path: &KeyPath, value: f64, lo: f64, hi: f64) -> Res<f64> {
        let pc = |x: f64| format!("{} %", format_sig(100.0 * x, 6));
        if value <= 0.0 && lo > 0.0 {
            return Err(self.err(
                path,
                format!("must be greater than zero, found {}", pc(value)),
            ));
        }
        if !(lo..=hi).contains(&value) {
            return Err(self.err(
                path,
                format!(
                    "{} is outside the plausible range {} .. {}: check the value (a bare number is a fraction: 0.02 = 2 %)",
                    pc(value),
                    pc(lo),
                    pc(hi)
                ),
            ));
        }
        Ok(value)
    }

    /// The wall of a line of bore `bore` (m): `rigid: true`, or a thickness
    /// with `material` or `youngs_modulus` (and `poisson_ratio`,
    /// `wall_model`). `what` names the line in messages (`tube`, …).
    pub fn wall(&self, path: &KeyPath, e: &WallKeys, bore: f64, what: &str) -> Res<Wall> {
        match (e.rigid, e.wall) {
            (Some(true), _)
                if e.wall.is_some()
                    || e.material.is_some()
                    || e.youngs_modulus.is_some()
                    || e.poisson_ratio.is_some()
                    || e.wall_model.is_some() =>
            {
                Err(self.err(
                    &path.key("rigid"),
                    format!(
                        "a rigid {what} takes no `wall`, `material`, `youngs_modulus`, `poisson_ratio` or `wall_model`"
                    ),
                ))
            }
            (Some(true), _) => Ok(Wall::Rigid),
            (_, None) => Err(self.err(
                path,
                format!(
                    "a `{what}` needs its wall: give `wall` (thickness) with `material` or `youngs_modulus`, or say `rigid: true`"
                ),
            )),
            (_, Some(w)) => self.elastic_wall(path, e, w, bore),
        }
    }

    /// An elastic wall of the given thickness: thick (Lamé, the default) or
    /// thin (Korteweg).
    fn elastic_wall(&self, path: &KeyPath, e: &WallKeys, thickness: f64, bore: f64) -> Res<Wall> {
        let thickness = self.in_range(&path.key("wall"), thickness, 1e-5, 0.5, "m")?;
        let thick = e.wall_model.unwrap_or(WallModel::Thick) == WallModel::Thick;
        if !thick && thickness >= bore / 2.0 {
            return Err(self.err(
                &path.key("wall"),
                format!(
                    "wall thickness {:.3} mm is not less than the bore radius {:.3} mm: the thin-wall (Korteweg) model does not hold; use `wall_model: thick` (Lamé) or check the values",
                    thickness * 1e3,
                    bore * 5e2
                ),
            ));
        }
        if thick && thickness > 5.0 * bore {
            return Err(self.err(
                &path.key("wall"),
                format!(
                    "wall thickness {:.3} mm is more than 5 times the bore {:.3} mm: check the values (a passage in a solid block is better modelled with `rigid: true`)",
                    thickness * 1e3,
                    bore * 1e3
                ),
            ));
        }
        let (modulus, poisson) = match (e.material, e.youngs_modulus) {
            (Some(_), Some(_)) => {
                return Err(self.err(
                    &path.key("youngs_modulus"),
                    "give either `material` or `youngs_modulus`, not both",
                ));
            }
            (Some(m), None) => {
                let material = Material::from_name(m).ok_or_else(|| {
                    self.err(
                        &path.key("material"),
                        format!(
                            "unknown material `{m}`; use one of: {} (or give `youngs_modulus`)",
                            Material::ALL.map(|m| m.name()).join(", ")
                        ),
                    )
                })?;
                if e.poisson_ratio.is_some() {
                    return Err(self.err(
                        &path.key("poisson_ratio"),
                        "a `material` brings its own Poisson's ratio: give `poisson_ratio` only with `youngs_modulus`",
                    ));
                }
                (material.youngs_modulus_pa(), material.poisson_ratio())
            }
            (None, Some(ey)) => {
                let ey = self.in_range(&path.key("youngs_modulus"), ey, 1e6, 1e12, "Pa")?;
                let nu = match e.poisson_ratio {
                    Some(nu) if (0.0..0.5).contains(&nu) => nu,
                    Some(nu) => {
                        return Err(self.err(
                            &path.key("poisson_ratio"),
                            format!("Poisson's ratio must be at least 0 and below 0.5, found {nu}"),
                        ));
                    }
                    None => DEFAULT_POISSON_RATIO,
                };
                (ey, nu)
            }
            (None, None) => {
                return Err(self.err(
                    &path.key("wall"),
                    "a tube wall needs `material` or `youngs_modulus`",
                ));
            }
        };
        if thick {
            Ok(Wall::ThickElastic {
                thickness_m: thickness,
                youngs_modulus_pa: modulus,
                poisson_ratio: poisson,
            })
        } else if e.poisson_ratio.is_some() {
            Err(self.err(
                &path.key("poisson_ratio"),
                "the thin-wall model does not use Poisson's ratio: drop it, or use `wall_model: thick`",
            ))
        } else {
            Ok(Wall::Elastic {
                thickness_m: thickness,
                youngs_modulus_pa: modulus,
            })
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const TEXT: &str = "line:\n  bore: 10 mm\n  wall: 2 mm\n";

    fn check() -> FileCheck<'static> {
        FileCheck {
            text: TEXT,
            file: "t.yaml",
        }
    }

    #[test]
    fn walls_default_to_thick_and_errors_are_located() {
        let path = KeyPath::root().key("line");
        let keys = WallKeys {
            wall: Some(2e-3),
            material: Some("steel"),
            ..WallKeys::default()
        };
        assert!(matches!(
            check().wall(&path, &keys, 10e-3, "tube").unwrap(),
            Wall::ThickElastic { .. }
        ));
        let thin = WallKeys {
            wall_model: Some(WallModel::Thin),
            ..keys
        };
        assert!(matches!(
            check().wall(&path, &thin, 10e-3, "tube").unwrap(),
            Wall::Elastic { .. }
        ));
        let rigid = WallKeys {
            rigid: Some(true),
            ..keys
        };
        let msg = check()
            .wall(&path, &rigid, 10e-3, "reference line")
            .unwrap_err()
            .to_string();
        assert!(
            msg.starts_with("t.yaml:") && msg.contains("a rigid reference line takes no"),
            "{msg}"
        );
        let none = WallKeys::default();
        let msg = check()
            .wall(&path, &none, 10e-3, "tube")
            .unwrap_err()
            .to_string();
        assert!(
            msg.contains("t.yaml:1:1: line: a `tube` needs its wall"),
            "{msg}"
        );
    }
}
