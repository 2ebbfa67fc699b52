//! Many flights advanced together, their field evaluations gathered into one batch per round.
//!
//! Each launch is an `async` flight (see `arcs`) that awaits its gravity values through a
//! [`FieldPort`]. The driver polls every active flight until it either finishes or waits on its
//! port, gathers the waiting points of all flights into one call of
//! [`crate::GravityModel::potential_acceleration_batch`] (the vector kernel, in parallel), hands
//! the values back and polls again. Each launch keeps its own adaptive steps, events and
//! bounces; only the evaluations are shared.
//!
//! A point's field value is bit-for-bit the same whatever batch evaluates it (the gravity
//! crate's promise), and nothing else of a flight depends on the others, so a launch flown
//! alone and inside a large set gives identical reports.

use std::future::Future;
use std::pin::Pin;
use std::sync::Mutex;
use std::sync::atomic::{AtomicU64, Ordering};
use std::task::{Context, Poll, Waker};
use std::time::Instant;

use nalgebra::{Point3, Vector3};
use rayon::prelude::*;

use crate::body::Body;

/// Most flights in progress at once: bounds the memory of a large set (each flight keeps its
/// integrator states and trajectory samples) while keeping batches large.
const MAX_ACTIVE: usize = 4096;

#[derive(Debug, Default)]
struct PortState {
    request: Option<Point3<f64>>,
    answer: Option<(f64, Vector3<f64>)>,
}

/// One flight's channel to the batch: at most one field evaluation pending at a time, and the
/// time spent on this flight (its own polls and its share of each batch).
#[derive(Debug, Default)]
pub(super) struct FieldPort {
    state: Mutex<PortState>,
    busy_ns: AtomicU64,
}

impl FieldPort {
    /// The potential and acceleration at `p_body_m`, once the driver has evaluated it.
    pub fn eval(&self, p_body_m: Point3<f64>) -> FieldWait<'_> {
        FieldWait {
            port: self,
            point: p_body_m,
        }
    }

    /// Seconds of work done for this flight so far.
    pub fn busy_s(&self) -> f64 {
        self.busy_ns.load(Ordering::Relaxed) as f64 * 1e-9
    }

    fn add_busy(&self, ns: u64) {
        self.busy_ns.fetch_add(ns, Ordering::Relaxed);
    }

    fn reset(&self) {
        let mut st = self.lock();
        *st = PortState::default();
        self.busy_ns.store(0, Ordering::Relaxed);
    }

    fn lock(&self) -> std::sync::MutexGuard<'_, PortState> {
        // A flight that panicked while holding the lock leaves plain data behind: keep it.
        self.state.lock().unwrap_or_else(|e| e.into_inner())
    }

    fn take_request(&self) -> Option<Point3<f64>> {
        self.lock().request.take()
    }

    fn answer(&self, value: (f64, Vector3<f64>)) {
        self.lock().answer = Some(value);
    }
}

/// The future of [`FieldPort::eval`].
pub(super) struct FieldWait<'a> {
    port: &'a FieldPort,
    point: Point3<f64>,
}

impl Future for FieldWait<'_> {
    type Output = (f64, Vector3<f64>);

    fn poll(self: Pin<&mut Self>, _cx: &mut Context<'_>) -> Poll<Self::Output> {
        let mut st = self.port.lock();
        if let Some(value) = st.answer.take() {
            return Poll::Ready(value);
        }
        st.request = Some(self.point);
        Poll::Pending
    }
}

/// A flight in progress.
type Flight<'a, R> = Pin<Box<dyn Future<Output = R> + Send + 'a>>;

struct Slot<'a, R> {
    index: usize,
    flight: Flight<'a, R>,
    done: Option<R>,
}

/// Runs `count` flights made by `start(k, port)` together and returns their results in order.
/// `finished(done, count)` is called after each flight ends.
pub(super) fn run_all<'a, R: Send>(
    body: &Body,
    count: usize,
    ports: &'a [FieldPort],
    start: impl Fn(usize, &'a FieldPort) -> Flight<'a, R>,
    finished: &(dyn Fn(usize, usize) + Sync),
) -> Vec<R> {
    let mut results: Vec<Option<R>> = (0..count).map(|_| None).collect();
    let mut slots: Vec<Option<Slot<'a, R>>> = (0..ports.len()).map(|_| None).collect();
    let mut next = 0;
    let mut done = 0;
    let mut points = Vec::new();
    let mut waiting = Vec::new();
    let mut values = Vec::new();
    loop {
        for (slot, port) in slots.iter_mut().zip(ports) {
            if slot.is_none() && next < count {
                port.reset();
                *slot = Some(Slot {
                    index: next,
                    flight: start(next, port),
                    done: None,
                });
                next += 1;
            }
        }
        // Advance every flight to its next evaluation (or its end), in parallel.
        slots
            .par_iter_mut()
            .zip(ports.par_iter())
            .for_each(|(slot, port)| {
                if let Some(s) = slot {
                    let t0 = Instant::now();
                    let mut cx = Context::from_waker(Waker::noop());
                    if let Poll::Ready(r) = s.flight.as_mut().poll(&mut cx) {
                        s.done = Some(r);
                    }
                    port.add_busy(t0.elapsed().as_nanos() as u64);
                }
            });
        let done_before = done;
        for slot in &mut slots {
            if slot.as_ref().is_some_and(|s| s.done.is_some())
                && let Some(s) = slot.take()
            {
                results[s.index] = s.done;
                done += 1;
                finished(done, count);
            }
        }
        // One batch for every waiting flight.
        points.clear();
        waiting.clear();
        for (k, (slot, port)) in slots.iter().zip(ports).enumerate() {
            if slot.is_some()
                && let Some(p) = port.take_request()
            {
                points.push(p);
                waiting.push(k);
            }
        }
        if points.is_empty() {
            if next >= count && slots.iter().all(Option::is_none) {
                break;
            }
            // A flight only waits on its port, so a round without requests must have ended
            // flights (whose slots the next round refills).
            assert!(done > done_before, "flights waiting on nothing");
            continue;
        }
        values.resize(points.len(), (0.0, Vector3::zeros()));
        let t0 = Instant::now();
        body.gravity
            .potential_acceleration_batch(&points, &mut values[..points.len()]);
        let share = t0.elapsed().as_nanos() as u64 / points.len() as u64;
        for (&k, &v) in waiting.iter().zip(&values) {
            ports[k].answer(v);
            ports[k].add_busy(share);
        }
    }
    results
        .into_iter()
        .map(|r| r.expect("every flight ran to its end"))
        .collect()
}

/// Ports for a set of `count` flights.
pub(super) fn ports_for(count: usize) -> Vec<FieldPort> {
    (0..count.clamp(1, MAX_ACTIVE))
        .map(|_| FieldPort::default())
        .collect()
}
