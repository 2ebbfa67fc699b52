//! Trajectory samples of every launch in both frames, as CSV: written launch by launch
//! ([`TrajectoryCsv`], so a merge can stream a file too big for memory) and read back launch by
//! launch ([`TrajectoryBlocks`]).

use std::io::{Read, Write};

use spinfall_dynamics::{FlightReport, TrajectorySample};

use super::{csv_error, csv_writer};
use crate::error::{Result, WorkflowError};

/// The header of trajectories.csv.
pub const TRAJECTORY_HEADER: [&str; 9] = [
    "launch_id",
    "frame",
    "t_s",
    "x_m",
    "y_m",
    "z_m",
    "vx_m_s",
    "vy_m_s",
    "vz_m_s",
];

/// Writes every trajectory sample of every report, body frame then inertial frame, with the
/// header `launch_id,frame,t_s,x_m,y_m,z_m,vx_m_s,vy_m_s,vz_m_s` (frame = `body` | `inertial`).
pub fn write_trajectories_csv(w: &mut dyn Write, reports: &[FlightReport]) -> Result<()> {
    let mut out = TrajectoryCsv::start(w)?;
    for r in reports {
        out.launch(&r.id, &r.trajectory_body, &r.trajectory_inertial)?;
    }
    out.finish()
}

/// trajectories.csv written one launch at a time (what [`write_trajectories_csv`] writes, in
/// pieces).
pub struct TrajectoryCsv<'w> {
    csv: csv::Writer<&'w mut dyn Write>,
}

impl<'w> TrajectoryCsv<'w> {
    /// Writes the header.
    pub fn start(w: &'w mut dyn Write) -> Result<Self> {
        let mut csv = csv_writer(w);
        csv.write_record(TRAJECTORY_HEADER).map_err(csv_error)?;
        Ok(TrajectoryCsv { csv })
    }

    /// Writes one launch's rows: its body-frame samples, then its inertial ones.
    pub fn launch(
        &mut self,
        id: &str,
        body: &[TrajectorySample],
        inertial: &[TrajectorySample],
    ) -> Result<()> {
        for (frame, samples) in [("body", body), ("inertial", inertial)] {
            for s in samples {
                self.csv
                    .serialize((
                        id,
                        frame,
                        s.t_s,
                        s.pos_m[0],
                        s.pos_m[1],
                        s.pos_m[2],
                        s.vel_m_s[0],
                        s.vel_m_s[1],
                        s.vel_m_s[2],
                    ))
                    .map_err(csv_error)?;
            }
        }
        Ok(())
    }

    /// Flushes what is buffered.
    pub fn finish(mut self) -> Result<()> {
        self.csv.flush().map_err(crate::output::io_error)
    }
}

/// One launch's rows of a trajectories.csv.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct TrajectoryBlock {
    /// Body-frame samples.
    pub body: Vec<TrajectorySample>,
    /// Inertial-frame samples.
    pub inertial: Vec<TrajectorySample>,
}

/// A trajectories.csv read back launch by launch, in file order. Only one launch's rows are
/// held at a time.
pub struct TrajectoryBlocks<R: Read> {
    reader: csv::Reader<R>,
    name: String,
    pending: Option<csv::StringRecord>,
    row: u64,
}

impl<R: Read> TrajectoryBlocks<R> {
    /// Reads the header of `source` (`name` for messages).
    ///
    /// # Errors
    /// A header other than [`TRAJECTORY_HEADER`].
    pub fn new(source: R, name: &str) -> Result<Self> {
        let mut reader = csv::ReaderBuilder::new()
            .has_headers(true)
            .flexible(false)
            .from_reader(source);
        let header = reader
            .headers()
            .map_err(|e| bad(name, format!("cannot read its header: {e}")))?;
        if header.iter().ne(TRAJECTORY_HEADER) {
            return Err(bad(
                name,
                format!(
                    "its header is not {} (not a Spinfall trajectories file)",
                    TRAJECTORY_HEADER.join(",")
                ),
            ));
        }
        let mut blocks = TrajectoryBlocks {
            reader,
            name: name.to_string(),
            pending: None,
            row: 1,
        };
        blocks.advance()?;
        Ok(blocks)
    }

    fn advance(&mut self) -> Result<()> {
        let mut record = csv::StringRecord::new();
        let more = self
            .reader
            .read_record(&mut record)
            .map_err(|e| bad(&self.name, format!("row {}: {e}", self.row + 1)))?;
        self.row += 1;
        self.pending = more.then_some(record);
        Ok(())
    }

    /// The launch id of the next rows (`None` at the end of the file).
    pub fn next_id(&self) -> Option<&str> {
        self.pending.as_ref().and_then(|r| r.get(0))
    }

    /// The rows of launch `id` if they come next, else an empty block (a launch without
    /// samples has no rows).
    ///
    /// # Errors
    /// A row that does not read as a sample.
    pub fn take(&mut self, id: &str) -> Result<TrajectoryBlock> {
        let mut block = TrajectoryBlock::default();
        while self.next_id() == Some(id) {
            let Some(record) = self.pending.take() else {
                break;
            };
            let number = |k: usize| -> Result<f64> {
                let text = record.get(k).unwrap_or("");
                text.parse::<f64>().map_err(|_| {
                    bad(
                        &self.name,
                        format!(
                            "row {}, column {}: {} is not a number",
                            self.row,
                            TRAJECTORY_HEADER[k],
                            spinfall_gravity::text::excerpt(text)
                        ),
                    )
                })
            };
            let sample = TrajectorySample {
                t_s: number(2)?,
                pos_m: [number(3)?, number(4)?, number(5)?],
                vel_m_s: [number(6)?, number(7)?, number(8)?],
            };
            match record.get(1) {
                Some("body") if block.inertial.is_empty() => block.body.push(sample),
                Some("inertial") => block.inertial.push(sample),
                other => {
                    return Err(bad(
                        &self.name,
                        format!(
                            "row {}: frame {} where body rows then inertial rows are expected",
                            self.row,
                            spinfall_gravity::text::excerpt(other.unwrap_or(""))
                        ),
                    ));
                }
            }
            self.advance()?;
        }
        Ok(block)
    }

    /// Checks that every row was taken; returns the source.
    ///
    /// # Errors
    /// Rows left over (of a launch not asked for, or out of launch order).
    pub fn finish(self) -> Result<R> {
        if let Some(id) = self.next_id() {
            return Err(bad(
                &self.name,
                format!(
                    "row {} belongs to launch {}, which is not this file's next launch (rows out \
                     of launch order or of a launch it should not have)",
                    self.row,
                    spinfall_gravity::text::excerpt(id)
                ),
            ));
        }
        Ok(self.reader.into_inner())
    }
}

fn bad(name: &str, what: String) -> WorkflowError {
    WorkflowError::Invalid(format!("{name}: {what}"))
}

#[cfg(test)]
#[allow(clippy::unwrap_used, reason = "tests unwrap freely")]
mod tests {
    use super::*;

    fn sample(t_s: f64) -> TrajectorySample {
        TrajectorySample {
            t_s,
            pos_m: [t_s * 0.1, -1.0 / 3.0, 1e-300],
            vel_m_s: [f64::MAX, f64::MIN_POSITIVE, -0.0],
        }
    }

    fn report(id: &str, body: usize, inertial: usize) -> FlightReport {
        let launch = spinfall_dynamics::launch::LaunchState::from_state(
            id,
            nalgebra::Point3::new(1.0, 2.0, 3.0),
            nalgebra::Vector3::new(0.0, 0.0, 1.0),
        )
        .unwrap();
        let mut r = FlightReport::not_flown(&launch, "test");
        r.trajectory_body = (0..body).map(|k| sample(k as f64 + 0.5)).collect();
        r.trajectory_inertial = (0..inertial).map(|k| sample(k as f64 * 7.0)).collect();
        r
    }

    /// What the writer writes reads back launch by launch to the same samples, bit for bit,
    /// and written again gives the same bytes (what a merge relies on).
    #[test]
    fn blocks_read_back_exactly_and_write_the_same_bytes() {
        let reports = vec![
            report("a", 3, 2),
            report("no samples", 0, 0),
            report("quote \" and, comma", 1, 4),
            report("only inertial", 0, 2),
        ];
        let mut first = Vec::new();
        write_trajectories_csv(&mut first, &reports).unwrap();
        let mut blocks = TrajectoryBlocks::new(first.as_slice(), "t.csv").unwrap();
        let mut again = Vec::new();
        {
            let mut out = TrajectoryCsv::start(&mut again).unwrap();
            for r in &reports {
                let b = blocks.take(&r.id).unwrap();
                assert_eq!(b.body, r.trajectory_body, "{}", r.id);
                assert_eq!(b.inertial, r.trajectory_inertial, "{}", r.id);
                out.launch(&r.id, &b.body, &b.inertial).unwrap();
            }
            out.finish().unwrap();
        }
        blocks.finish().unwrap();
        assert!(first == again);
    }

    #[test]
    fn rows_out_of_order_or_malformed_are_refused() {
        let reports = vec![report("a", 2, 1), report("b", 1, 1)];
        let mut text = Vec::new();
        write_trajectories_csv(&mut text, &reports).unwrap();
        // Asked in another order: b's rows are left over.
        let mut blocks = TrajectoryBlocks::new(text.as_slice(), "t.csv").unwrap();
        assert!(blocks.take("b").unwrap().body.is_empty());
        blocks.take("a").unwrap();
        let e = blocks.finish().err().unwrap().to_string();
        assert!(e.contains("t.csv") && e.contains("launch \"b\""), "{e}");
        // Another header, a bad number, a body row after inertial ones.
        let e = TrajectoryBlocks::new(&b"id,t\n"[..], "x.csv")
            .err()
            .unwrap();
        assert!(e.to_string().contains("header"), "{e}");
        let head = TRAJECTORY_HEADER.join(",");
        let bad = format!("{head}\na,body,1,2,3,x,5,6,7\n");
        let e = TrajectoryBlocks::new(bad.as_bytes(), "x.csv")
            .unwrap()
            .take("a")
            .unwrap_err();
        assert!(e.to_string().contains("z_m"), "{e}");
        let swapped = format!("{head}\na,inertial,1,2,3,4,5,6,7\na,body,1,2,3,4,5,6,7\n");
        let e = TrajectoryBlocks::new(swapped.as_bytes(), "x.csv")
            .unwrap()
            .take("a")
            .unwrap_err();
        assert!(e.to_string().contains("frame"), "{e}");
    }
}
