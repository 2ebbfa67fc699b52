//! The fuzz targets: the OBJ, PLY and STL readers and the scenario parser, through the workflow exactly as
//! the front ends call them, with checks of what they accept.

use std::path::PathBuf;
use std::sync::{Arc, OnceLock};

use spinfall_dynamics::Body;
use spinfall_dynamics::scenario::Scenario;
use spinfall_gravity::LengthUnit;
use spinfall_workflow::limits::estimate;
use spinfall_workflow::scenario_file::{ScenarioSource, read_scenario};
use spinfall_workflow::shape::{ShapeRequest, ShapeSource, open_shape};

/// What an input did: accepted, or refused with an error message (its shape, digits removed,
/// tells inputs apart for the runner).
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Outcome {
    /// Accepted.
    Accepted,
    /// Refused with this message.
    Refused(String),
}

impl Outcome {
    /// A short signature of the outcome: the message without digits or quoted text, cut.
    pub fn signature(&self) -> String {
        match self {
            Outcome::Accepted => "accepted".into(),
            Outcome::Refused(m) => {
                let mut sig = String::new();
                let mut quoted = false;
                for c in m.chars() {
                    if c == '"' || c == '`' {
                        quoted = !quoted;
                        continue;
                    }
                    if !quoted && !c.is_ascii_digit() {
                        sig.push(c);
                    }
                    if sig.len() > 90 {
                        break;
                    }
                }
                sig
            }
        }
    }
}

/// The OBJ reader: parse, validate (closed, manifold, oriented, one shell, no crossing faces),
/// recentre. An accepted model must have a positive finite volume and finite mass properties.
pub fn obj(bytes: &[u8]) -> Outcome {
    shape_file("fuzz.obj", bytes)
}

/// The PLY reader (ASCII, binary little- and big-endian), with the checks of [`obj`].
pub fn ply(bytes: &[u8]) -> Outcome {
    shape_file("fuzz.ply", bytes)
}

/// The STL reader (ASCII, binary), with the checks of [`obj`].
pub fn stl(bytes: &[u8]) -> Outcome {
    shape_file("fuzz.stl", bytes)
}

/// A shape file named `name` (its extension picks the reader) opened as the front ends do.
fn shape_file(name: &str, bytes: &[u8]) -> Outcome {
    let unit = if bytes.first().is_some_and(|b| b % 2 == 0) {
        LengthUnit::Metre
    } else {
        LengthUnit::Kilometre
    };
    let request = ShapeRequest {
        source: ShapeSource::Bytes {
            name: name.into(),
            bytes: Arc::new(bytes.to_vec()),
        },
        unit,
        recenter: true,
    };
    match open_shape(&request) {
        Ok(opened) => {
            let mp = opened.shape.mass_properties();
            assert!(
                mp.volume_m3.is_finite() && mp.volume_m3 > 0.0,
                "accepted a model with volume {}",
                mp.volume_m3
            );
            assert!(mp.center_of_mass_m.iter().all(|c| c.is_finite()));
            assert!(mp.equivalent_radius_m.is_finite());
            Outcome::Accepted
        }
        Err(e) => Outcome::Refused(e.to_string()),
    }
}

/// A body to place launches on (the demo body with the example's mass and spin), built once.
fn demo_body() -> &'static Body {
    static BODY: OnceLock<Body> = OnceLock::new();
    BODY.get_or_init(|| {
        let (shape, _) = spinfall_dynamics::scenario::builtin_quillon()
            .unwrap_or_else(|e| panic!("the demo body must load: {e}"));
        Scenario::builtin_example()
            .build_body(shape)
            .unwrap_or_else(|e| panic!("the demo body must build: {e}"))
    })
}

/// Most launches the target expands on the demo body per input.
const MAX_EXPANDED: u64 = 300;

/// The scenario parser: decode, parse, validate; an accepted scenario must write back to JSON
/// that reads to an equal scenario, give a finite estimate, and (when small) expand its
/// launches on the demo body without panicking.
pub fn scenario(bytes: &[u8]) -> Outcome {
    let source = ScenarioSource::Bytes {
        name: "fuzz.json".into(),
        bytes: Arc::new(bytes.to_vec()),
        dir: PathBuf::from("."),
    };
    let loaded = match read_scenario(&source) {
        Ok(l) => l,
        Err(e) => return Outcome::Refused(e.to_string()),
    };
    let s = &loaded.scenario;
    let text = s
        .to_json_string_pretty()
        .unwrap_or_else(|e| panic!("an accepted scenario must serialise: {e}"));
    let back = Scenario::from_json_str(&text)
        .unwrap_or_else(|e| panic!("an accepted scenario must read back: {e}\n{text}"));
    assert_eq!(&back, s, "the scenario changed on a round trip");
    let est = estimate(s, 10_000, &s.flight_settings());
    assert!(est.launches == s.launch_count());
    let _ = loaded.shape_request();
    if est.launches <= MAX_EXPANDED
        && let Err(e) = s.build_launches(demo_body())
    {
        return Outcome::Refused(e.to_string());
    }
    Outcome::Accepted
}
