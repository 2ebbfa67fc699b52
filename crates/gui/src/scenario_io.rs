//! Session <-> scenario document (the JSON format `spinfall fly` reads).
//!
//! Runs go through the scenario too ([`session_scenario`] then `Scenario::build_launches`), so
//! the app flies exactly what the saved file makes the command line fly.

use nalgebra::Point3;
use spinfall_dynamics::FlightSettings;
use spinfall_dynamics::SpinAxis;
use spinfall_dynamics::scenario::{
    BUILTIN_QUILLON, BodySpec, BounceSpec, DispersionSpec, FanSpec, IntegratorSpec, LaunchEntry,
    SCENARIO_FORMAT, SCENARIO_VERSION, Scenario, ShapeSource as ScenarioShape, SiteSpec, SpinSpec,
};
use spinfall_gravity::ShapeModel;
use std::path::{Path, PathBuf};

use crate::app::{Loaded, LoadedShape, SpinfallApp, load_shape};
use crate::jobs::JobContext;
use crate::session::{
    AxisChoice, BodyParams, LaunchParams, MassInput, ShapeSource, SiteEntry, SiteLocation, Spread,
};

/// Everything of the session that goes into a scenario.
pub(crate) struct SessionParts<'a> {
    pub shape: &'a LoadedShape,
    pub params: &'a BodyParams,
    pub sites: &'a [SiteEntry],
    /// Launch entries the app cannot edit (explicit states, special options), kept as loaded.
    pub extra_launches: &'a [LaunchEntry],
    pub settings: &'a FlightSettings,
    pub seed: u64,
}

/// Unique launch ids: repeated names get ` (2)`, ` (3)`, ...
fn unique_ids(names: impl Iterator<Item = String>) -> Vec<String> {
    let mut seen: Vec<String> = Vec::new();
    let mut out = Vec::new();
    for name in names {
        let base = if name.trim().is_empty() {
            "site".to_string()
        } else {
            name.trim().to_string()
        };
        let mut id = base.clone();
        let mut k = 2;
        while seen.contains(&id) {
            id = format!("{base} ({k})");
            k += 1;
        }
        seen.push(id.clone());
        out.push(id);
    }
    out
}

/// Shape path as written in a scenario stored in `folder` (relative when inside it).
fn shape_path_for(path: &Path, folder: Option<&Path>) -> String {
    let abs = std::fs::canonicalize(path).unwrap_or_else(|_| path.to_path_buf());
    if let Some(folder) = folder
        && let Ok(folder) = std::fs::canonicalize(folder)
        && let Ok(rel) = abs.strip_prefix(&folder)
    {
        return rel.display().to_string();
    }
    abs.display().to_string()
}

/// The session as a scenario. `folder` is where the file will be written (shape paths are
/// made relative to it when possible).
pub(crate) fn session_scenario(parts: &SessionParts<'_>, folder: Option<&Path>) -> Scenario {
    let p = parts.params;
    let (shape, unit) = match &parts.shape.source {
        ShapeSource::Demo => (
            BUILTIN_QUILLON.to_string(),
            spinfall_gravity::LengthUnit::Kilometre,
        ),
        ShapeSource::File { path, unit } => (shape_path_for(path, folder), *unit),
    };
    let body = BodySpec {
        shape,
        unit,
        name: Some(parts.shape.name.clone()),
        density_kg_m3: (p.mass_input == MassInput::Density).then_some(p.density_kg_m3),
        mass_kg: (p.mass_input == MassInput::Mass).then_some(p.mass_kg),
        gm_m3_s2: (p.mass_input == MassInput::Gm).then_some(p.gm_m3_s2),
        recenter: true,
        spin: SpinSpec {
            period_h: p.period_h,
            axis: p.spin_axis(),
            phase_deg: p.phase_deg,
        },
    };
    let ids = unique_ids(
        parts
            .sites
            .iter()
            .map(|s| s.name.clone())
            .chain(parts.extra_launches.iter().map(|l| l.id.clone())),
    );
    let mut launches: Vec<LaunchEntry> = parts
        .sites
        .iter()
        .zip(&ids)
        .map(|(s, id)| site_entry(s, id))
        .collect();
    for (l, id) in parts
        .extra_launches
        .iter()
        .zip(ids.iter().skip(parts.sites.len()))
    {
        launches.push(LaunchEntry {
            id: id.clone(),
            ..l.clone()
        });
    }
    let i = &parts.settings.integrator;
    let b = &parts.settings.bounce;
    Scenario {
        format: SCENARIO_FORMAT.into(),
        version: SCENARIO_VERSION,
        name: Some(format!("{} session", parts.shape.name)),
        notes: Some(
            "Saved by the Spinfall app. Spinfall is for research and planning, not flight-certified."
                .into(),
        ),
        seed: Some(parts.seed),
        body,
        launches,
        integrator: IntegratorSpec {
            rel_tol: i.rel_tol,
            abs_tol_m: i.abs_tol_m,
            abs_tol_m_s: i.abs_tol_m_s,
            max_time_s: i.max_time_s,
            max_steps: i.max_steps,
            max_wall_s: i.max_wall_s,
        },
        bounce: BounceSpec {
            normal_restitution: b.normal_restitution,
            tangential_restitution: b.tangential_restitution,
            max_bounces: b.max_bounces,
            rest_speed_m_s: b.rest_speed_m_s,
        },
    }
}

fn site_entry(s: &SiteEntry, id: &str) -> LaunchEntry {
    let site = match s.location {
        SiteLocation::LatLon { lat_deg, lon_deg } => SiteSpec {
            lat_deg: Some(lat_deg),
            lon_deg: Some(lon_deg),
            ..Default::default()
        },
        SiteLocation::Point { point_body_m, .. } => SiteSpec {
            point_m: Some(point_body_m),
            ..Default::default()
        },
    };
    let (fan, dispersion) = match s.launch.spread {
        Spread::Single => (None, None),
        Spread::Fan { vary, to, count } => (
            Some(FanSpec {
                vary,
                to,
                count: count.max(1) as usize,
            }),
            None,
        ),
        Spread::Dispersion {
            count,
            speed_sigma_percent,
            direction_sigma_deg,
        } => (
            None,
            Some(DispersionSpec {
                count: count.max(1) as usize,
                speed_sigma_m_s: None,
                speed_sigma_percent: Some(speed_sigma_percent),
                direction_sigma_deg,
            }),
        ),
    };
    LaunchEntry {
        id: id.to_string(),
        state: None,
        site: Some(site),
        speed_m_s: Some(s.launch.speed_m_s),
        azimuth_deg: Some(s.launch.azimuth_deg),
        elevation_deg: Some(s.launch.elevation_deg),
        altitude_m: None,
        normal: None,
        fan,
        dispersion,
    }
}

/// The app's session as scenario JSON; `folder` as in [`session_scenario`].
pub(crate) fn to_json_in(app: &SpinfallApp, folder: Option<&Path>) -> Result<String, String> {
    let Some(shape) = &app.shape else {
        return Err("no body loaded".into());
    };
    if app.sites.is_empty() && app.extra_launches.is_empty() {
        return Err("a scenario needs at least one launch site".into());
    }
    let scenario = session_scenario(&app.session_parts(shape), folder);
    scenario.validate().map_err(|e| e.to_string())?;
    scenario.to_json_string_pretty().map_err(|e| e.to_string())
}

/// Body settings from a scenario.
fn params_from(s: &Scenario) -> BodyParams {
    let b = &s.body;
    let mut p = BodyParams::default();
    if let Some(d) = b.density_kg_m3 {
        p.mass_input = MassInput::Density;
        p.density_kg_m3 = d;
    } else if let Some(m) = b.mass_kg {
        p.mass_input = MassInput::Mass;
        p.mass_kg = m;
    } else if let Some(g) = b.gm_m3_s2 {
        p.mass_input = MassInput::Gm;
        p.gm_m3_s2 = g;
    }
    p.period_h = b.spin.period_h;
    p.phase_deg = b.spin.phase_deg;
    match b.spin.axis {
        SpinAxis::MaxMoment => p.axis = AxisChoice::MaxMoment,
        SpinAxis::PlusZ => p.axis = AxisChoice::PlusZ,
        SpinAxis::Vector(v) => {
            p.axis = AxisChoice::Custom;
            p.custom_axis = v;
        }
    }
    p
}

/// Site entries the app can edit, and the other launch entries kept as they are.
fn sites_from(s: &Scenario, shape: &ShapeModel) -> (Vec<SiteEntry>, Vec<LaunchEntry>) {
    let mut sites = Vec::new();
    let mut extra = Vec::new();
    for l in &s.launches {
        let editable = l.state.is_none()
            && l.altitude_m.is_none()
            && l.normal.is_none()
            && !(l.fan.is_some() && l.dispersion.is_some())
            && l.dispersion
                .as_ref()
                .is_none_or(|d| d.speed_sigma_m_s.is_none());
        let location = l.site.as_ref().and_then(|site| {
            if let (Some(lat_deg), Some(lon_deg)) = (site.lat_deg, site.lon_deg) {
                Some(SiteLocation::LatLon { lat_deg, lon_deg })
            } else if let Some(face) = site.face.filter(|&f| f < shape.face_count()) {
                let c = shape.face_centroid(face);
                Some(SiteLocation::Point {
                    point_body_m: [c.x, c.y, c.z],
                    face,
                })
            } else if let Some(p) = site.point_m {
                let hit = shape.nearest_surface_point(&Point3::from(p));
                Some(SiteLocation::Point {
                    point_body_m: [hit.point_m.x, hit.point_m.y, hit.point_m.z],
                    face: hit.face,
                })
            } else {
                None
            }
        });
        match (editable, location, l.speed_m_s) {
            (true, Some(location), Some(speed_m_s)) => {
                let spread = match (&l.fan, &l.dispersion) {
                    (Some(f), _) => Spread::Fan {
                        vary: f.vary,
                        to: f.to,
                        count: f.count.min(u32::MAX as usize) as u32,
                    },
                    (None, Some(d)) => Spread::Dispersion {
                        count: d.count.min(u32::MAX as usize) as u32,
                        speed_sigma_percent: d.speed_sigma_percent.unwrap_or(0.0),
                        direction_sigma_deg: d.direction_sigma_deg,
                    },
                    (None, None) => Spread::Single,
                };
                sites.push(SiteEntry {
                    name: l.id.clone(),
                    location,
                    launch: LaunchParams {
                        speed_m_s,
                        azimuth_deg: l.azimuth_deg.unwrap_or(0.0),
                        elevation_deg: l.elevation_deg.unwrap_or(90.0),
                        spread,
                    },
                });
            }
            _ => extra.push(l.clone()),
        }
    }
    (sites, extra)
}

/// Load a scenario and its shape model (worker thread).
pub(crate) fn load(ctx: &JobContext, path: &Path) -> Result<Loaded, String> {
    ctx.progress.set_stage("reading the scenario");
    let text = std::fs::read_to_string(path)
        .map_err(|e| format!("cannot read {}: {e}", path.display()))?;
    let scenario =
        Scenario::from_json_str(&text).map_err(|e| format!("{}: {e}", path.display()))?;
    let params = params_from(&scenario);
    let file = match scenario.shape_source() {
        ScenarioShape::BuiltinQuillon => None,
        ScenarioShape::File { path: shape, unit } => {
            let shape = PathBuf::from(shape);
            let resolved = if shape.is_absolute() {
                shape
            } else {
                path.parent().unwrap_or(Path::new(".")).join(shape)
            };
            Some((resolved, unit))
        }
    };
    let (shape, view, params) = load_shape(ctx, file, params)?;
    let (sites, extra) = sites_from(&scenario, &shape.shape);
    let settings = scenario.flight_settings();
    Ok(Loaded {
        shape,
        view,
        params,
        scenario: Some(crate::app::ScenarioParts {
            sites,
            extra_launches: extra,
            settings,
            seed: scenario.seed.unwrap_or(0),
            path: path.to_path_buf(),
        }),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn launch_ids_are_made_unique() {
        let ids = unique_ids(["A", "B", "A", " ", "A"].iter().map(|s| s.to_string()));
        assert_eq!(ids, ["A", "B", "A (2)", "site", "A (3)"]);
    }
}
