//! The exporters: results JSON and CSV, trajectories CSV, surface map CSV (moved here from the
//! dynamics crate with the issue 9 workflow layer), read back by an independent CSV reader.
#![allow(clippy::unwrap_used, reason = "tests unwrap freely")]

use std::sync::Arc;
use std::sync::atomic::AtomicBool;

use nalgebra::Vector3;
use spinfall_dynamics::launch::{Fan, FanQuantity, LaunchSpec};
use spinfall_dynamics::site::{NormalMode, Site};
use spinfall_dynamics::surface_map::surface_map;
use spinfall_dynamics::{Body, FlightReport, FlightSettings, Outcome, PointMass, Spin, fly_all};
use spinfall_gravity::{ShapeModel, generate};
use spinfall_workflow::export::{
    write_results_csv, write_results_json, write_surface_map_csv, write_trajectories_csv,
};

/// A 1 km sphere with a point-mass field (GM = 50 m^3/s^2) spinning once in 50 h.
fn body() -> Body {
    let shape = Arc::new(ShapeModel::new(generate::icosphere(1000.0, 2)).unwrap().0);
    let spin = Spin::from_hours(50.0, Vector3::z_axis(), 0.0).unwrap();
    Body::with_gravity("ball", shape, Arc::new(PointMass { gm_m3_s2: 50.0 }), spin).unwrap()
}

fn reports(body: &Body, id: &str) -> Vec<FlightReport> {
    let site = Site::from_lat_lon(body, 20.0, 30.0, NormalMode::Face).unwrap();
    let spec = LaunchSpec {
        id: id.into(),
        site,
        speed_m_s: 0.1,
        azimuth_deg: 0.0,
        elevation_deg: 45.0,
        start_altitude_m: 0.05,
    };
    let launches: Vec<_> = spec
        .fan(&Fan {
            vary: FanQuantity::AzimuthDeg,
            to: 300.0,
            count: 6,
        })
        .unwrap()
        .iter()
        .map(|m| m.state().unwrap())
        .collect();
    fly_all(
        body,
        &launches,
        &FlightSettings::default(),
        &|_, _| {},
        &AtomicBool::new(false),
    )
}

#[test]
fn results_and_trajectories_read_back() {
    let body = body();
    // An id with a comma and a quote: the CSV must quote it (RFC 4180).
    let reports = reports(&body, "hop, \"north\"");
    assert!(reports.iter().all(|r| r.outcome == Outcome::Landed));

    let mut json = Vec::new();
    write_results_json(&mut json, &reports, None).unwrap();
    let v: serde_json::Value = serde_json::from_slice(&json).unwrap();
    assert_eq!(v["launches"].as_array().unwrap().len(), 6);
    assert_eq!(v["launches"][0]["outcome"]["kind"], "landed");
    assert_eq!(v["launches"][0]["id"], "hop, \"north\"/0");
    assert!(v["launches"][0]["first_contact_time_s"].as_f64().unwrap() > 0.0);

    let mut csv = Vec::new();
    write_trajectories_csv(&mut csv, &reports).unwrap();
    let mut reader = csv::Reader::from_reader(csv.as_slice());
    assert_eq!(
        reader.headers().unwrap().iter().collect::<Vec<_>>(),
        [
            "launch_id",
            "frame",
            "t_s",
            "x_m",
            "y_m",
            "z_m",
            "vx_m_s",
            "vy_m_s",
            "vz_m_s"
        ]
    );
    let rows: Vec<csv::StringRecord> = reader.records().map(|r| r.unwrap()).collect();
    let expected: usize = reports
        .iter()
        .map(|r| r.trajectory_body.len() + r.trajectory_inertial.len())
        .sum();
    assert_eq!(rows.len(), expected);
    assert_eq!(&rows[0][0], "hop, \"north\"/0");
    assert!(rows.iter().any(|r| &r[1] == "inertial"));
    // Numbers read back exactly.
    let t: f64 = rows[1][2].parse().unwrap();
    assert_eq!(t, reports[0].trajectory_body[1].t_s);

    let mut table = Vec::new();
    write_results_csv(&mut table, &reports).unwrap();
    let mut reader = csv::Reader::from_reader(table.as_slice());
    let header: Vec<String> = reader.headers().unwrap().iter().map(String::from).collect();
    assert_eq!(header[0], "id");
    assert_eq!(header.len(), 13);
    let rows: Vec<csv::StringRecord> = reader.records().map(|r| r.unwrap()).collect();
    assert_eq!(rows.len(), 6);
    assert_eq!(&rows[2][0], "hop, \"north\"/2");
    assert_eq!(&rows[2][1], "landed");
    let downrange: f64 = rows[2][6].parse().unwrap();
    assert_eq!(downrange, reports[2].downrange_m.unwrap());
}

#[test]
fn surface_map_csv_has_a_row_per_face_with_units() {
    let body = body();
    let map = surface_map(&body, &|_, _| {}, &AtomicBool::new(false)).unwrap();
    let mut csv = Vec::new();
    write_surface_map_csv(&mut csv, &body, &map).unwrap();
    let mut reader = csv::Reader::from_reader(csv.as_slice());
    let header: Vec<String> = reader.headers().unwrap().iter().map(String::from).collect();
    assert!(header[..2] == ["face", "centroid_x_m"]);
    assert!(
        header.iter().any(|h| h == "slope_deg")
            && header.iter().any(|h| h == "escape_speed_min_m_s")
    );
    let rows: Vec<csv::StringRecord> = reader.records().map(|r| r.unwrap()).collect();
    assert_eq!(rows.len(), body.shape.face_count());
    assert!(rows.iter().all(|r| r.len() == header.len()));
}
