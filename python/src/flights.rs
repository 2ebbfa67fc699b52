//! `spinfall.FlightResults`: the reports of a run as dicts of numpy arrays, with the
//! trajectories of both frames.

use pyo3::exceptions::{PyIndexError, PyKeyError};
use pyo3::prelude::*;
use pyo3::types::{PyDict, PyList, PyString};
use spinfall_dynamics::{Contact, FlightReport, Outcome, ShadowEvent, TrajectorySample};
use spinfall_workflow::gravity_method::FieldUsed;
use spinfall_workflow::run::RunReports;

use crate::arrays;
use crate::convert::to_py_value;

/// The results of `Scenario.fly()`: one report per launch, in launch order.
///
/// `results["fan/0"]` (or `results[0]`) is a dict of one launch (see `launch`); iterating gives
/// the launch ids; `table()` gives one array per column of results.csv over all launches. Units
/// are SI and in the keys; positions are in the body-fixed frame unless the key says inertial.
#[pyclass(name = "FlightResults", module = "spinfall", frozen)]
pub struct PyFlightResults {
    reports: Vec<FlightReport>,
    field: FieldUsed,
    elapsed_s: f64,
}

impl PyFlightResults {
    /// The results of a finished run.
    pub fn new(done: RunReports, field: FieldUsed) -> PyFlightResults {
        PyFlightResults {
            reports: done.reports,
            field,
            elapsed_s: done.elapsed.as_secs_f64(),
        }
    }

    fn index_of(&self, key: &Bound<'_, PyAny>) -> PyResult<usize> {
        if let Ok(id) = key.cast::<PyString>() {
            let id = id.to_str()?;
            return self.reports.iter().position(|r| r.id == id).ok_or_else(|| {
                PyKeyError::new_err(format!("no launch with id {id:?} in these results"))
            });
        }
        let k: isize = key
            .extract()
            .map_err(|_| PyKeyError::new_err("a launch is looked up by its id (str) or index"))?;
        let n = self.reports.len() as isize;
        let i = if k < 0 { k + n } else { k };
        if (0..n).contains(&i) {
            Ok(i as usize)
        } else {
            Err(PyIndexError::new_err(format!(
                "launch index {k} is out of range for {n} launches"
            )))
        }
    }
}

#[pymethods]
impl PyFlightResults {
    /// Launch ids in launch order.
    #[getter]
    fn ids(&self) -> Vec<String> {
        self.reports.iter().map(|r| r.id.clone()).collect()
    }

    /// Every launch as a dict (see `launch`), keyed by id, in launch order.
    #[getter]
    fn launches<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyDict>> {
        let dict = PyDict::new(py);
        for r in &self.reports {
            dict.set_item(&r.id, report_dict(py, r)?)?;
        }
        Ok(dict)
    }

    /// One launch as a dict, by id or index (as `results[key]`). Keys: `id`; `outcome`
    /// ("landed", "escaped", "still_flying" or "failed") and `failure_reason`; the flags
    /// `landed`, `escaped`, `still_flying`, `failed`; `launch_pos_body_m`,
    /// `launch_vel_body_m_s`; the times `first_contact_time_s`, `rest_time_s` (None when it
    /// never happened) and `end_time_s`; `first_contact` (a dict, or None); `landing` (the rest
    /// point: `pos_body_m`, `lat_deg`, `lon_deg`, `face`, or None); `downrange_m`,
    /// `max_altitude_m`; `contacts` (a dict of arrays, one entry per contact: `t_s`,
    /// `pos_body_m`, `face`, `lat_deg`, `lon_deg`, `impact_speed_m_s`, `impact_angle_deg`,
    /// `rebound_speed_m_s`, `rest`); `jacobi_rel_drift` (None under the Sun's forces),
    /// `energy_added_m2_s2`, `shadow_events` (arrays `t_s`, `enters_shadow`, `pos_body_m`);
    /// `frame_agreement_m`, `gravity_evaluations`, `steps`, `rejected_steps`; the final states
    /// `final_pos_body_m`, `final_vel_body_m_s`, `final_pos_inertial_m`,
    /// `final_vel_inertial_m_s`; `trajectory_body` and `trajectory_inertial` (dicts of arrays
    /// `t_s` (k,), `pos_m` (k, 3), `vel_m_s` (k, 3); body-frame velocities are relative to the
    /// rotating body); and `targeting` (a dict, for launches of a targeted entry, else None).
    fn launch<'py>(
        &self,
        py: Python<'py>,
        key: &Bound<'py, PyAny>,
    ) -> PyResult<Bound<'py, PyDict>> {
        let i = self.index_of(key)?;
        report_dict(py, &self.reports[i])
    }

    fn __getitem__<'py>(
        &self,
        py: Python<'py>,
        key: &Bound<'py, PyAny>,
    ) -> PyResult<Bound<'py, PyDict>> {
        self.launch(py, key)
    }

    fn __len__(&self) -> usize {
        self.reports.len()
    }

    fn __contains__(&self, id: &str) -> bool {
        self.reports.iter().any(|r| r.id == id)
    }

    fn __iter__<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyAny>> {
        Ok(PyList::new(py, self.ids())?.try_iter()?.into_any())
    }

    /// One column per results.csv column over all launches, in launch order: `id` and
    /// `outcome` (lists of str), then float64 arrays with NaN where a launch has no value:
    /// `first_contact_time_s`, `rest_time_s`, `landing_lat_deg`, `landing_lon_deg`,
    /// `downrange_m`, `max_altitude_m`, `first_impact_speed_m_s`, `first_impact_angle_deg`,
    /// `jacobi_rel_drift` (NaN under the Sun's forces, where results.csv says "n/a"),
    /// `frame_agreement_m`, `energy_added_m2_s2` (NaN without the Sun's forces), and the
    /// counts `contacts` and `shadow_events` (int64). Also `end_time_s`, and (n, 3) arrays
    /// `landing_pos_body_m` (NaN rows where not landed) and `final_pos_body_m`. The targeting
    /// columns of a targeted run are in each launch's `targeting` dict instead.
    fn table<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyDict>> {
        let r = &self.reports;
        let col = |f: &dyn Fn(&FlightReport) -> Option<f64>| {
            arrays::scalars(py, r.iter().map(|x| f(x).unwrap_or(f64::NAN)).collect())
        };
        let dict = PyDict::new(py);
        dict.set_item("id", self.ids())?;
        dict.set_item(
            "outcome",
            r.iter()
                .map(|x| outcome_kind(&x.outcome))
                .collect::<Vec<_>>(),
        )?;
        dict.set_item("first_contact_time_s", col(&|x| x.first_contact_time_s))?;
        dict.set_item("rest_time_s", col(&|x| x.rest_time_s))?;
        dict.set_item("end_time_s", col(&|x| Some(x.end_time_s)))?;
        dict.set_item(
            "landing_lat_deg",
            col(&|x| x.landing.as_ref().map(|l| l.lat_deg)),
        )?;
        dict.set_item(
            "landing_lon_deg",
            col(&|x| x.landing.as_ref().map(|l| l.lon_deg)),
        )?;
        dict.set_item("downrange_m", col(&|x| x.downrange_m))?;
        dict.set_item("max_altitude_m", col(&|x| Some(x.max_altitude_m)))?;
        dict.set_item(
            "first_impact_speed_m_s",
            col(&|x| x.contacts.first().map(|c| c.impact_speed_m_s)),
        )?;
        dict.set_item(
            "first_impact_angle_deg",
            col(&|x| x.contacts.first().map(|c| c.impact_angle_deg)),
        )?;
        dict.set_item(
            "contacts",
            arrays::integers(py, r.iter().map(|x| x.contacts.len() as i64).collect()),
        )?;
        dict.set_item("jacobi_rel_drift", col(&|x| x.jacobi_rel_drift))?;
        dict.set_item("frame_agreement_m", col(&|x| Some(x.frame_agreement_m)))?;
        dict.set_item("energy_added_m2_s2", col(&|x| x.energy_added_m2_s2))?;
        dict.set_item(
            "shadow_events",
            arrays::integers(py, r.iter().map(|x| x.shadow_events.len() as i64).collect()),
        )?;
        dict.set_item(
            "landing_pos_body_m",
            arrays::rows3(
                py,
                r.iter()
                    .map(|x| x.landing.as_ref().map_or([f64::NAN; 3], |l| l.pos_body_m)),
            ),
        )?;
        dict.set_item(
            "final_pos_body_m",
            arrays::rows3(py, r.iter().map(|x| x.final_pos_body_m)),
        )?;
        Ok(dict)
    }

    /// The launches that failed, as (id, reason) pairs.
    fn failures(&self) -> Vec<(String, String)> {
        spinfall_workflow::run::failures(&self.reports)
            .map(|(id, why)| (id.to_string(), why.to_string()))
            .collect()
    }

    /// How gravity was computed, as the `field` record of results.json.
    #[getter]
    fn field<'py>(&self, py: Python<'py>) -> PyResult<Bound<'py, PyAny>> {
        to_py_value(py, &self.field)
    }

    /// Wall-clock time of the flights, s.
    #[getter]
    fn elapsed_s(&self) -> f64 {
        self.elapsed_s
    }

    fn __repr__(&self) -> String {
        let landed = self
            .reports
            .iter()
            .filter(|r| r.outcome == Outcome::Landed)
            .count();
        format!(
            "FlightResults({} launches, {landed} landed, {} failed)",
            self.reports.len(),
            spinfall_workflow::run::failures(&self.reports).count()
        )
    }
}

/// The outcome's kind as results.json names it.
fn outcome_kind(o: &Outcome) -> &'static str {
    match o {
        Outcome::Landed => "landed",
        Outcome::Escaped => "escaped",
        Outcome::StillFlying => "still_flying",
        Outcome::Failed { .. } => "failed",
    }
}

/// One launch as the dict documented at `FlightResults.launch`.
fn report_dict<'py>(py: Python<'py>, r: &FlightReport) -> PyResult<Bound<'py, PyDict>> {
    let d = PyDict::new(py);
    d.set_item("id", &r.id)?;
    d.set_item("outcome", outcome_kind(&r.outcome))?;
    let reason = match &r.outcome {
        Outcome::Failed { reason } => Some(reason.as_str()),
        _ => None,
    };
    d.set_item("failure_reason", reason)?;
    d.set_item("landed", r.outcome == Outcome::Landed)?;
    d.set_item("escaped", r.outcome == Outcome::Escaped)?;
    d.set_item("still_flying", r.outcome == Outcome::StillFlying)?;
    d.set_item("failed", reason.is_some())?;
    d.set_item("launch_pos_body_m", arrays::vec3(py, r.launch_pos_body_m))?;
    d.set_item(
        "launch_vel_body_m_s",
        arrays::vec3(py, r.launch_vel_body_m_s),
    )?;
    d.set_item("first_contact_time_s", r.first_contact_time_s)?;
    d.set_item("rest_time_s", r.rest_time_s)?;
    d.set_item("end_time_s", r.end_time_s)?;
    let first = match r.contacts.first() {
        Some(c) => contact_dict(py, c)?.into_any(),
        None => py.None().into_bound(py),
    };
    d.set_item("first_contact", first)?;
    let landing = match &r.landing {
        Some(l) => {
            let ld = PyDict::new(py);
            ld.set_item("pos_body_m", arrays::vec3(py, l.pos_body_m))?;
            ld.set_item("lat_deg", l.lat_deg)?;
            ld.set_item("lon_deg", l.lon_deg)?;
            ld.set_item("face", l.face)?;
            ld.into_any()
        }
        None => py.None().into_bound(py),
    };
    d.set_item("landing", landing)?;
    d.set_item("downrange_m", r.downrange_m)?;
    d.set_item("max_altitude_m", r.max_altitude_m)?;
    d.set_item("contacts", contacts_dict(py, &r.contacts)?)?;
    d.set_item("jacobi_rel_drift", r.jacobi_rel_drift)?;
    d.set_item("energy_added_m2_s2", r.energy_added_m2_s2)?;
    d.set_item("shadow_events", shadow_dict(py, &r.shadow_events)?)?;
    d.set_item("frame_agreement_m", r.frame_agreement_m)?;
    d.set_item("gravity_evaluations", r.gravity_evaluations)?;
    d.set_item("steps", r.steps)?;
    d.set_item("rejected_steps", r.rejected_steps)?;
    d.set_item("final_pos_body_m", arrays::vec3(py, r.final_pos_body_m))?;
    d.set_item("final_vel_body_m_s", arrays::vec3(py, r.final_vel_body_m_s))?;
    d.set_item(
        "final_pos_inertial_m",
        arrays::vec3(py, r.final_pos_inertial_m),
    )?;
    d.set_item(
        "final_vel_inertial_m_s",
        arrays::vec3(py, r.final_vel_inertial_m_s),
    )?;
    d.set_item("trajectory_body", trajectory_dict(py, &r.trajectory_body)?)?;
    d.set_item(
        "trajectory_inertial",
        trajectory_dict(py, &r.trajectory_inertial)?,
    )?;
    let targeting = match &r.targeting {
        Some(t) => to_py_value(py, t.as_ref())?,
        None => py.None().into_bound(py),
    };
    d.set_item("targeting", targeting)?;
    Ok(d)
}

/// One contact as a dict of values.
fn contact_dict<'py>(py: Python<'py>, c: &Contact) -> PyResult<Bound<'py, PyDict>> {
    let d = PyDict::new(py);
    d.set_item("t_s", c.t_s)?;
    d.set_item("pos_body_m", arrays::vec3(py, c.pos_body_m))?;
    d.set_item("face", c.face)?;
    d.set_item("lat_deg", c.lat_deg)?;
    d.set_item("lon_deg", c.lon_deg)?;
    d.set_item("impact_speed_m_s", c.impact_speed_m_s)?;
    d.set_item("impact_angle_deg", c.impact_angle_deg)?;
    d.set_item("rebound_speed_m_s", c.rebound_speed_m_s)?;
    d.set_item("rest", c.rest)?;
    Ok(d)
}

/// Every contact as a dict of arrays, one entry per contact.
fn contacts_dict<'py>(py: Python<'py>, cs: &[Contact]) -> PyResult<Bound<'py, PyDict>> {
    let d = PyDict::new(py);
    let col = |f: fn(&Contact) -> f64| arrays::scalars(py, cs.iter().map(f).collect());
    d.set_item("t_s", col(|c| c.t_s))?;
    d.set_item(
        "pos_body_m",
        arrays::rows3(py, cs.iter().map(|c| c.pos_body_m)),
    )?;
    d.set_item(
        "face",
        arrays::integers(py, cs.iter().map(|c| c.face as i64).collect()),
    )?;
    d.set_item("lat_deg", col(|c| c.lat_deg))?;
    d.set_item("lon_deg", col(|c| c.lon_deg))?;
    d.set_item("impact_speed_m_s", col(|c| c.impact_speed_m_s))?;
    d.set_item("impact_angle_deg", col(|c| c.impact_angle_deg))?;
    d.set_item("rebound_speed_m_s", col(|c| c.rebound_speed_m_s))?;
    d.set_item(
        "rest",
        arrays::flags(py, cs.iter().map(|c| c.rest).collect()),
    )?;
    Ok(d)
}

/// Shadow entries and exits as a dict of arrays.
fn shadow_dict<'py>(py: Python<'py>, es: &[ShadowEvent]) -> PyResult<Bound<'py, PyDict>> {
    let d = PyDict::new(py);
    d.set_item(
        "t_s",
        arrays::scalars(py, es.iter().map(|e| e.t_s).collect()),
    )?;
    d.set_item(
        "enters_shadow",
        arrays::flags(py, es.iter().map(|e| e.enters_shadow).collect()),
    )?;
    d.set_item(
        "pos_body_m",
        arrays::rows3(py, es.iter().map(|e| e.pos_body_m)),
    )?;
    Ok(d)
}

/// A trajectory as a dict of arrays: `t_s` (k,), `pos_m` (k, 3), `vel_m_s` (k, 3).
fn trajectory_dict<'py>(py: Python<'py>, ts: &[TrajectorySample]) -> PyResult<Bound<'py, PyDict>> {
    let d = PyDict::new(py);
    d.set_item(
        "t_s",
        arrays::scalars(py, ts.iter().map(|s| s.t_s).collect()),
    )?;
    d.set_item("pos_m", arrays::rows3(py, ts.iter().map(|s| s.pos_m)))?;
    d.set_item("vel_m_s", arrays::rows3(py, ts.iter().map(|s| s.vel_m_s)))?;
    Ok(d)
}
