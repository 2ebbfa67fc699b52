//! Adaptive Dormand–Prince 8(5,3) Runge–Kutta integrator with its 7th-order dense output.
//!
//! The method and its coefficients are those of E. Hairer, S. P. Nørsett and G. Wanner,
//! "Solving Ordinary Differential Equations I: Nonstiff Problems", 2nd ed., Springer 1993,
//! section II.10 (the DOP853 code): 12 stages, an 8th-order solution, an error estimate that
//! combines the 5th- and 3rd-order embedded formulas, and a continuous extension of order 7 that
//! costs three more evaluations (computed only when asked for, see [`Dop853::prepare_dense`]).
//! The step after an accepted step reuses the derivative at the new point (FSAL), so a step
//! costs 12 evaluations (11 after the first).
#![allow(
    clippy::excessive_precision,
    reason = "coefficients copied with all the digits published by Hairer et al."
)]
#![allow(
    clippy::needless_range_loop,
    reason = "component loops over several parallel arrays read clearer with an index"
)]

use std::future::Future;
use std::pin::pin;
use std::task::{Context, Poll, Waker};

/// A first-order system `y' = f(t, y)` of fixed dimension `N`.
pub trait OdeSystem<const N: usize> {
    /// The derivative at `(t, y)`.
    fn derivative(&mut self, t: f64, y: &[f64; N]) -> [f64; N];
}

/// A first-order system whose derivative may have to wait, e.g. for a gravity evaluation that
/// is gathered with those of other integrations into one batch (see `flight`). The integrator's
/// `*_async` methods take these; the plain methods take an [`OdeSystem`].
pub trait AsyncOdeSystem<const N: usize> {
    /// The derivative at `(t, y)`, once it is available.
    fn derivative(&mut self, t: f64, y: &[f64; N]) -> impl Future<Output = [f64; N]> + Send;
}

/// An [`OdeSystem`] seen as an [`AsyncOdeSystem`] that never waits.
struct Ready<'a, S>(&'a mut S);

impl<const N: usize, S: OdeSystem<N>> AsyncOdeSystem<N> for Ready<'_, S> {
    fn derivative(&mut self, t: f64, y: &[f64; N]) -> impl Future<Output = [f64; N]> + Send {
        std::future::ready(self.0.derivative(t, y))
    }
}

/// Runs a future built on [`Ready`] systems, which completes at its first poll.
fn now<F: Future>(f: F) -> F::Output {
    let mut f = pin!(f);
    match f.as_mut().poll(&mut Context::from_waker(Waker::noop())) {
        Poll::Ready(v) => v,
        Poll::Pending => unreachable!("a plain OdeSystem never waits"),
    }
}

/// Why the integrator could not take a step.
#[derive(Debug, Clone, PartialEq)]
pub enum StepError {
    /// The step size became negligible against `t` (stiff, singular or non-finite derivative).
    StepSizeUnderflow {
        /// Time at which it happened, s.
        t: f64,
    },
}

impl std::fmt::Display for StepError {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            StepError::StepSizeUnderflow { t } => write!(
                f,
                "step size underflow at t = {t} s (singular or non-finite acceleration?)"
            ),
        }
    }
}

// Nodes c_i.
const C: [f64; 16] = [
    0.0,
    0.526001519587677318785587544488e-01,
    0.789002279381515978178381316732e-01,
    0.118350341907227396726757197510e+00,
    0.281649658092772603273242802490e+00,
    0.333333333333333333333333333333e+00,
    0.25e+00,
    0.307692307692307692307692307692e+00,
    0.651282051282051282051282051282e+00,
    0.6e+00,
    0.857142857142857142857142857142e+00,
    1.0,
    1.0,
    0.1e+00,
    0.2e+00,
    0.777777777777777777777777777778e+00,
];

// Coupling coefficients a_ij as sparse rows: (stage index, [(j, a_ij)]).
const A2: [(usize, f64); 1] = [(0, 5.26001519587677318785587544488e-2)];
const A3: [(usize, f64); 2] = [
    (0, 1.97250569845378994544595329183e-2),
    (1, 5.91751709536136983633785987549e-2),
];
const A4: [(usize, f64); 2] = [
    (0, 2.95875854768068491816892993775e-2),
    (2, 8.87627564304205475450678981324e-2),
];
const A5: [(usize, f64); 3] = [
    (0, 2.41365134159266685502369798665e-1),
    (2, -8.84549479328286085344864962717e-1),
    (3, 9.24834003261792003115737966543e-1),
];
const A6: [(usize, f64); 3] = [
    (0, 3.7037037037037037037037037037e-2),
    (3, 1.70828608729473871279604482173e-1),
    (4, 1.25467687566822425016691814123e-1),
];
const A7: [(usize, f64); 4] = [
    (0, 3.7109375e-2),
    (3, 1.70252211019544039314978060272e-1),
    (4, 6.02165389804559606850219397283e-2),
    (5, -1.7578125e-2),
];
const A8: [(usize, f64); 5] = [
    (0, 3.70920001185047927108779319836e-2),
    (3, 1.70383925712239993810214054705e-1),
    (4, 1.07262030446373284651809199168e-1),
    (5, -1.53194377486244017527936158236e-2),
    (6, 8.27378916381402288758473766002e-3),
];
const A9: [(usize, f64); 6] = [
    (0, 6.24110958716075717114429577812e-1),
    (3, -3.36089262944694129406857109825e0),
    (4, -8.68219346841726006818189891453e-1),
    (5, 2.75920996994467083049415600797e1),
    (6, 2.01540675504778934086186788979e1),
    (7, -4.34898841810699588477366255144e1),
];
const A10: [(usize, f64); 7] = [
    (0, 4.77662536438264365890433908527e-1),
    (3, -2.48811461997166764192642586468e0),
    (4, -5.90290826836842996371446475743e-1),
    (5, 2.12300514481811942347288949897e1),
    (6, 1.52792336328824235832596922938e1),
    (7, -3.32882109689848629194453265587e1),
    (8, -2.03312017085086261358222928593e-2),
];
const A11: [(usize, f64); 8] = [
    (0, -9.3714243008598732571704021658e-1),
    (3, 5.18637242884406370830023853209e0),
    (4, 1.09143734899672957818500254654e0),
    (5, -8.14978701074692612513997267357e0),
    (6, -1.85200656599969598641566180701e1),
    (7, 2.27394870993505042818970056734e1),
    (8, 2.49360555267965238987089396762e0),
    (9, -3.0467644718982195003823669022e0),
];
const A12: [(usize, f64); 9] = [
    (0, 2.27331014751653820792359768449e0),
    (3, -1.05344954667372501984066689879e1),
    (4, -2.00087205822486249909675718444e0),
    (5, -1.79589318631187989172765950534e1),
    (6, 2.79488845294199600508499808837e1),
    (7, -2.85899827713502369474065508674e0),
    (8, -8.87285693353062954433549289258e0),
    (9, 1.23605671757943030647266201528e1),
    (10, 6.43392746015763530355970484046e-1),
];
// Extra stages of the continuous extension (index 12 is the derivative at the new point).
const A14: [(usize, f64); 8] = [
    (0, 5.61675022830479523392909219681e-2),
    (6, 2.53500210216624811088794765333e-1),
    (7, -2.46239037470802489917441475441e-1),
    (8, -1.24191423263816360469010140626e-1),
    (9, 1.5329179827876569731206322685e-1),
    (10, 8.20105229563468988491666602057e-3),
    (11, 7.56789766054569976138603589584e-3),
    (12, -8.298e-3),
];
const A15: [(usize, f64); 8] = [
    (0, 3.18346481635021405060768473261e-2),
    (5, 2.83009096723667755288322961402e-2),
    (6, 5.35419883074385676223797384372e-2),
    (7, -5.49237485713909884646569340306e-2),
    (10, -1.08347328697249322858509316994e-4),
    (11, 3.82571090835658412954920192323e-4),
    (12, -3.40465008687404560802977114492e-4),
    (13, 1.41312443674632500278074618366e-1),
];
const A16: [(usize, f64); 8] = [
    (0, -4.28896301583791923408573538692e-1),
    (5, -4.69762141536116384314449447206e0),
    (6, 7.68342119606259904184240953878e0),
    (7, 4.06898981839711007970213554331e0),
    (8, 3.56727187455281109270669543021e-1),
    (12, -1.39902416515901462129418009734e-3),
    (13, 2.9475147891527723389556272149e0),
    (14, -9.15095847217987001081870187138e0),
];

// 8th-order weights.
const B: [(usize, f64); 8] = [
    (0, 5.42937341165687622380535766363e-2),
    (5, 4.45031289275240888144113950566e0),
    (6, 1.89151789931450038304281599044e0),
    (7, -5.8012039600105847814672114227e0),
    (8, 3.1116436695781989440891606237e-1),
    (9, -1.52160949662516078556178806805e-1),
    (10, 2.01365400804030348374776537501e-1),
    (11, 4.47106157277725905176885569043e-2),
];
// 3rd-order error weights (subtracted from the 8th-order combination).
const BHH: [(usize, f64); 3] = [
    (0, 0.244094488188976377952755905512e+00),
    (8, 0.733846688281611857341361741547e+00),
    (11, 0.220588235294117647058823529412e-01),
];
// 5th-order error weights.
const ER: [(usize, f64); 8] = [
    (0, 0.1312004499419488073250102996e-01),
    (5, -0.1225156446376204440720569753e+01),
    (6, -0.4957589496572501915214079952e+00),
    (7, 0.1664377182454986536961530415e+01),
    (8, -0.3503288487499736816886487290e+00),
    (9, 0.3341791187130174790297318841e+00),
    (10, 0.8192320648511571246570742613e-01),
    (11, -0.2235530786388629525884427845e-01),
];
// Dense-output coefficients d_4j .. d_7j over stages (0, 5..=15).
const D_IDX: [usize; 12] = [0, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15];
const D: [[f64; 12]; 4] = [
    [
        -0.84289382761090128651353491142e+01,
        0.56671495351937776962531783590e+00,
        -0.30689499459498916912797304727e+01,
        0.23846676565120698287728149680e+01,
        0.21170345824450282767155149946e+01,
        -0.87139158377797299206789907490e+00,
        0.22404374302607882758541771650e+01,
        0.63157877876946881815570249290e+00,
        -0.88990336451333310820698117400e-01,
        0.18148505520854727256656404962e+02,
        -0.91946323924783554000451984436e+01,
        -0.44360363875948939664310572000e+01,
    ],
    [
        0.10427508642579134603413151009e+02,
        0.24228349177525818288430175319e+03,
        0.16520045171727028198505394887e+03,
        -0.37454675472269020279518312152e+03,
        -0.22113666853125306036270938578e+02,
        0.77334326684722638389603898808e+01,
        -0.30674084731089398182061213626e+02,
        -0.93321305264302278729567221706e+01,
        0.15697238121770843886131091075e+02,
        -0.31139403219565177677282850411e+02,
        -0.93529243588444783865713862664e+01,
        0.35816841486394083752465898540e+02,
    ],
    [
        0.19985053242002433820987653617e+02,
        -0.38703730874935176555105901742e+03,
        -0.18917813819516756882830838328e+03,
        0.52780815920542364900561016686e+03,
        -0.11573902539959630126141871134e+02,
        0.68812326946963000169666922661e+01,
        -0.10006050966910838403183860980e+01,
        0.77771377980534432092869265740e+00,
        -0.27782057523535084065932004339e+01,
        -0.60196695231264120758267380846e+02,
        0.84320405506677161018159903784e+02,
        0.11992291136182789328035130030e+02,
    ],
    [
        -0.25693933462703749003312586129e+02,
        -0.15418974869023643374053993627e+03,
        -0.23152937917604549567536039109e+03,
        0.35763911791061412378285349910e+03,
        0.93405324183624310003907691704e+02,
        -0.37458323136451633156875139351e+02,
        0.10409964950896230045147246184e+03,
        0.29840293426660503123344363579e+02,
        -0.43533456590011143754432175058e+02,
        0.96324553959188282948394950600e+02,
        -0.39177261675615439165231486172e+02,
        -0.14972683625798562581422125276e+03,
    ],
];

// Step-size control: safety factor, smallest and largest step ratio, PI memory exponent.
const SAFETY: f64 = 0.9;
const FAC_MIN: f64 = 0.333;
const FAC_MAX: f64 = 6.0;
const PI_BETA: f64 = 0.0;

/// Error tolerances of the integrator.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tolerances<const N: usize> {
    /// Relative tolerance (dimensionless).
    pub rel: f64,
    /// Absolute tolerance per component, in that component's unit.
    pub abs: [f64; N],
}

/// The DOP853 integrator state: current point, last accepted step and its dense output.
#[derive(Debug, Clone)]
pub struct Dop853<const N: usize> {
    tol: Tolerances<N>,
    t: f64,
    y: [f64; N],
    f: [f64; N],
    h_next: f64,
    t_old: f64,
    y_old: [f64; N],
    f_old: [f64; N],
    h_done: f64,
    k: [[f64; N]; 16],
    dense: Option<[[f64; N]; 8]>,
    last_rejected: bool,
    err_old: f64,
    h_acc: f64,
    err_acc: f64,
    /// Accepted steps so far.
    pub steps: u64,
    /// Rejected step attempts so far.
    pub rejected: u64,
}

fn combine<const N: usize>(
    y: &[f64; N],
    h: f64,
    k: &[[f64; N]; 16],
    row: &[(usize, f64)],
) -> [f64; N] {
    let mut out = *y;
    for (i, o) in out.iter_mut().enumerate() {
        let mut s = 0.0;
        for &(j, a) in row {
            s += a * k[j][i];
        }
        *o += h * s;
    }
    out
}

impl<const N: usize> Dop853<N> {
    /// Starts at `(t0, y0)`; evaluates the derivative there and chooses an initial step
    /// (Hairer's starting-step heuristic), never longer than `h_max`.
    pub fn new<S: OdeSystem<N>>(
        sys: &mut S,
        t0: f64,
        y0: [f64; N],
        tol: Tolerances<N>,
        h_max: f64,
    ) -> Self {
        now(Self::new_async(&mut Ready(sys), t0, y0, tol, h_max))
    }

    /// [`Dop853::new`] for an [`AsyncOdeSystem`].
    pub async fn new_async<S: AsyncOdeSystem<N>>(
        sys: &mut S,
        t0: f64,
        y0: [f64; N],
        tol: Tolerances<N>,
        h_max: f64,
    ) -> Self {
        // The placeholder first step is replaced by the heuristic at once.
        let mut me = Self::with_first_step_async(sys, t0, y0, tol, 1e-6).await;
        me.h_next = me.initial_step(sys, h_max.abs()).await;
        me
    }

    /// Starts at `(t0, y0)` with a first step size chosen by the caller (e.g. from the time
    /// scales of the problem) instead of the generic heuristic; one evaluation. A step that is
    /// too long is simply rejected and shortened.
    pub fn with_first_step<S: OdeSystem<N>>(
        sys: &mut S,
        t0: f64,
        y0: [f64; N],
        tol: Tolerances<N>,
        h_first: f64,
    ) -> Self {
        now(Self::with_first_step_async(
            &mut Ready(sys),
            t0,
            y0,
            tol,
            h_first,
        ))
    }

    /// [`Dop853::with_first_step`] for an [`AsyncOdeSystem`].
    pub async fn with_first_step_async<S: AsyncOdeSystem<N>>(
        sys: &mut S,
        t0: f64,
        y0: [f64; N],
        tol: Tolerances<N>,
        h_first: f64,
    ) -> Self {
        let f0 = sys.derivative(t0, &y0).await;
        Dop853 {
            tol,
            t: t0,
            y: y0,
            f: f0,
            h_next: if h_first.is_finite() && h_first > 0.0 {
                h_first
            } else {
                1e-6
            },
            t_old: t0,
            y_old: y0,
            f_old: f0,
            h_done: 0.0,
            k: [[0.0; N]; 16],
            dense: None,
            last_rejected: false,
            err_old: 1e-4,
            h_acc: 0.0,
            err_acc: 1e-2,
            steps: 0,
            rejected: 0,
        }
    }

    fn sk(&self, i: usize, a: f64, b: f64) -> f64 {
        self.tol.abs[i] + self.tol.rel * a.abs().max(b.abs())
    }

    async fn initial_step<S: AsyncOdeSystem<N>>(&self, sys: &mut S, h_max: f64) -> f64 {
        let (mut dnf, mut dny) = (0.0, 0.0);
        for i in 0..N {
            let sk = self.sk(i, self.y[i], 0.0);
            dnf += (self.f[i] / sk).powi(2);
            dny += (self.y[i] / sk).powi(2);
        }
        let mut h = if dnf <= 1e-10 || dny <= 1e-10 {
            1e-6
        } else {
            (dny / dnf).sqrt() * 0.01
        };
        h = h.min(h_max);
        let mut y1 = self.y;
        for i in 0..N {
            y1[i] += h * self.f[i];
        }
        let f1 = sys.derivative(self.t + h, &y1).await;
        let mut der2 = 0.0;
        for i in 0..N {
            let sk = self.sk(i, self.y[i], 0.0);
            der2 += ((f1[i] - self.f[i]) / sk).powi(2);
        }
        let der2 = der2.sqrt() / h;
        let der12 = der2.abs().max(dnf.sqrt());
        let h1 = if der12 <= 1e-15 {
            (h * 1e-3).max(1e-6)
        } else {
            (0.01 / der12).powf(1.0 / 8.0)
        };
        let h = (100.0 * h).min(h1).min(h_max);
        if h.is_finite() && h > 0.0 { h } else { 1e-6 }
    }

    /// Current time.
    pub fn t(&self) -> f64 {
        self.t
    }
    /// Current state.
    pub fn y(&self) -> &[f64; N] {
        &self.y
    }
    /// Derivative at the current state.
    pub fn f(&self) -> &[f64; N] {
        &self.f
    }
    /// Start time of the last accepted step.
    pub fn t_old(&self) -> f64 {
        self.t_old
    }
    /// State at the start of the last accepted step.
    pub fn y_old(&self) -> &[f64; N] {
        &self.y_old
    }
    /// Derivative at the start of the last accepted step.
    pub fn f_old(&self) -> &[f64; N] {
        &self.f_old
    }
    /// Length of the last accepted step.
    pub fn h_done(&self) -> f64 {
        self.h_done
    }
    /// Proposed length of the next step.
    pub fn h_next(&self) -> f64 {
        self.h_next
    }
    /// Overrides the proposed length of the next step (e.g. to end it at a predicted event);
    /// ignored unless finite and positive.
    pub fn set_h_next(&mut self, h: f64) {
        if h.is_finite() && h > 0.0 {
            self.h_next = h;
        }
    }

    /// Takes one accepted step (retrying with smaller steps after rejections) without passing
    /// `t_stop`. Returns an error if the step size underflows.
    pub fn step<S: OdeSystem<N>>(&mut self, sys: &mut S, t_stop: f64) -> Result<(), StepError> {
        now(self.step_async(&mut Ready(sys), t_stop))
    }

    /// [`Dop853::step`] for an [`AsyncOdeSystem`].
    pub async fn step_async<S: AsyncOdeSystem<N>>(
        &mut self,
        sys: &mut S,
        t_stop: f64,
    ) -> Result<(), StepError> {
        let mut h = self.h_next;
        loop {
            let remaining = t_stop - self.t;
            let to_stop = h >= remaining * 0.999_999;
            if to_stop {
                h = remaining;
            }
            if h.is_nan() || h <= 1e-14 * self.t.abs().max(1e-3) || !h.is_finite() {
                return Err(StepError::StepSizeUnderflow { t: self.t });
            }
            self.k[0] = self.f;
            let rows: [&[(usize, f64)]; 11] =
                [&A2, &A3, &A4, &A5, &A6, &A7, &A8, &A9, &A10, &A11, &A12];
            for (s, row) in rows.iter().enumerate() {
                let ys = combine(&self.y, h, &self.k, row);
                self.k[s + 1] = sys.derivative(self.t + C[s + 1] * h, &ys).await;
            }
            let y_new = combine(&self.y, h, &self.k, &B);
            // Error estimate (Hairer's combined 5th/3rd-order norm).
            let (mut err5, mut err3) = (0.0, 0.0);
            let mut finite = true;
            for i in 0..N {
                let sk = self.sk(i, self.y[i], y_new[i]);
                let mut bsum = 0.0;
                for &(j, b) in &B {
                    bsum += b * self.k[j][i];
                }
                let mut e3 = bsum;
                for &(j, b) in &BHH {
                    e3 -= b * self.k[j][i];
                }
                let mut e5 = 0.0;
                for &(j, e) in &ER {
                    e5 += e * self.k[j][i];
                }
                err5 += (e5 / sk).powi(2);
                err3 += (e3 / sk).powi(2);
                finite &= y_new[i].is_finite();
            }
            let mut deno = err5 + 0.01 * err3;
            if deno <= 0.0 {
                deno = 1.0;
            }
            let err = if finite {
                h.abs() * err5 * (1.0 / (N as f64 * deno)).sqrt()
            } else {
                f64::INFINITY
            };
            if err <= 1.0 && err.is_finite() {
                // Step-size controller with memory (PI control; Hairer & Wanner, Solving ODEs
                // II, sec. IV.2, and the `beta` option of DOP853).
                let mut scale = if err == 0.0 {
                    FAC_MAX
                } else {
                    SAFETY * err.powf(-(1.0 / 8.0 - 0.2 * PI_BETA)) * self.err_old.powf(PI_BETA)
                };
                // Predictive control (Gustafsson 1994, as in Hairer & Wanner's RADAU5): when the
                // error grows from step to step, extrapolate that trend instead of waiting for
                // a rejection.
                if self.h_acc > 0.0 && err > 0.0 {
                    let predictive =
                        SAFETY * (h / self.h_acc) * (self.err_acc / (err * err)).powf(1.0 / 8.0);
                    scale = scale.min(predictive);
                }
                let scale = scale.clamp(FAC_MIN, FAC_MAX);
                self.h_acc = h;
                self.err_acc = err.max(1e-2);
                self.err_old = err.max(1e-4);
                let f_new = sys.derivative(self.t + h, &y_new).await;
                self.k[12] = f_new;
                self.t_old = self.t;
                self.y_old = self.y;
                self.f_old = self.f;
                self.h_done = h;
                // Land exactly on t_stop so callers can compare times without rounding.
                self.t = if to_stop { t_stop } else { self.t + h };
                self.y = y_new;
                self.f = f_new;
                self.dense = None;
                self.h_next = if self.last_rejected {
                    h * scale.min(1.0)
                } else {
                    h * scale
                };
                self.last_rejected = false;
                self.steps += 1;
                return Ok(());
            }
            self.rejected += 1;
            self.last_rejected = true;
            let scale = if err.is_finite() {
                (SAFETY * err.powf(-1.0 / 8.0)).max(FAC_MIN)
            } else {
                0.25
            };
            h *= scale;
        }
    }

    /// Computes the continuous extension of the last accepted step (three more evaluations).
    /// Cheap to call twice: the second call does nothing.
    pub fn prepare_dense<S: OdeSystem<N>>(&mut self, sys: &mut S) {
        now(self.prepare_dense_async(&mut Ready(sys)));
    }

    /// [`Dop853::prepare_dense`] for an [`AsyncOdeSystem`].
    pub async fn prepare_dense_async<S: AsyncOdeSystem<N>>(&mut self, sys: &mut S) {
        if self.dense.is_some() || self.h_done == 0.0 {
            return;
        }
        let h = self.h_done;
        for (s, row) in [(13usize, &A14), (14, &A15), (15, &A16)] {
            let ys = combine(&self.y_old, h, &self.k, row);
            self.k[s] = sys.derivative(self.t_old + C[s] * h, &ys).await;
        }
        let mut r = [[0.0; N]; 8];
        for i in 0..N {
            let ydiff = self.y[i] - self.y_old[i];
            let bspl = h * self.f_old[i] - ydiff;
            r[0][i] = self.y_old[i];
            r[1][i] = ydiff;
            r[2][i] = bspl;
            r[3][i] = ydiff - h * self.f[i] - bspl;
            for (m, drow) in D.iter().enumerate() {
                let mut s = 0.0;
                for (c, &j) in D_IDX.iter().enumerate() {
                    s += drow[c] * self.k[j][i];
                }
                r[4 + m][i] = h * s;
            }
        }
        self.dense = Some(r);
    }

    /// The state at time `t` inside the last accepted step from the 7th-order continuous
    /// extension, or `None` if [`Dop853::prepare_dense`] was not called since that step.
    pub fn dense_output(&self, t: f64) -> Option<[f64; N]> {
        let r = self.dense.as_ref()?;
        let s = (t - self.t_old) / self.h_done;
        let s1 = 1.0 - s;
        let mut out = [0.0; N];
        for (i, o) in out.iter_mut().enumerate() {
            *o = r[0][i]
                + s * (r[1][i]
                    + s1 * (r[2][i]
                        + s * (r[3][i]
                            + s1 * (r[4][i] + s * (r[5][i] + s1 * (r[6][i] + s * r[7][i]))))));
        }
        Some(out)
    }

    /// Restarts from a new state at the current time (after a bounce): drops the dense output
    /// and re-evaluates the derivative. Keeps the step-size proposal, capped at `h_max`.
    pub fn restart<S: OdeSystem<N>>(&mut self, sys: &mut S, t: f64, y: [f64; N], h_max: f64) {
        *self = Dop853::new(sys, t, y, self.tol, h_max);
    }
}

/// Quintic Hermite interpolation of a second-order system stored as `[pos(3), vel(3)]` with
/// derivative `[vel(3), acc(3)]`: position and velocity at fraction `s` of a step of length `h`
/// from the states and derivatives at both ends. Costs no evaluations; error O(h^6) in position.
pub fn hermite_pos_vel(
    h: f64,
    y0: &[f64; 6],
    f0: &[f64; 6],
    y1: &[f64; 6],
    f1: &[f64; 6],
    s: f64,
) -> [f64; 6] {
    let s2 = s * s;
    let s3 = s2 * s;
    let s4 = s3 * s;
    let s5 = s4 * s;
    // Quintic Hermite basis on [0, 1] (values, first and second derivatives at both ends).
    let h0 = 1.0 - 10.0 * s3 + 15.0 * s4 - 6.0 * s5;
    let h1 = s - 6.0 * s3 + 8.0 * s4 - 3.0 * s5;
    let h2 = 0.5 * s2 - 1.5 * s3 + 1.5 * s4 - 0.5 * s5;
    let h3 = 0.5 * s3 - s4 + 0.5 * s5;
    let h4 = -4.0 * s3 + 7.0 * s4 - 3.0 * s5;
    let h5 = 10.0 * s3 - 15.0 * s4 + 6.0 * s5;
    // Their derivatives with respect to s.
    let d0 = -30.0 * s2 + 60.0 * s3 - 30.0 * s4;
    let d1 = 1.0 - 18.0 * s2 + 32.0 * s3 - 15.0 * s4;
    let d2 = s - 4.5 * s2 + 6.0 * s3 - 2.5 * s4;
    let d3 = 1.5 * s2 - 4.0 * s3 + 2.5 * s4;
    let d4 = -12.0 * s2 + 28.0 * s3 - 15.0 * s4;
    let d5 = 30.0 * s2 - 60.0 * s3 + 30.0 * s4;
    let mut out = [0.0; 6];
    for i in 0..3 {
        let (p0, v0, a0) = (y0[i], f0[i], f0[i + 3]);
        let (p1, v1, a1) = (y1[i], f1[i], f1[i + 3]);
        out[i] = h0 * p0 + h * h1 * v0 + h * h * h2 * a0 + h * h * h3 * a1 + h * h4 * v1 + h5 * p1;
        out[i + 3] =
            (d0 * p0 + h * d1 * v0 + h * h * d2 * a0 + h * h * d3 * a1 + h * d4 * v1 + d5 * p1) / h;
    }
    out
}
