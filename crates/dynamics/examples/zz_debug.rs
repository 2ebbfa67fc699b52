use spinfall_dynamics::dop853::{Dop853, OdeSystem, Tolerances};
include!("../benches/support/launches.rs");
struct Sys<'a> { b: &'a spinfall_dynamics::Body, w: nalgebra::Vector3<f64> }
impl OdeSystem<6> for Sys<'_> {
    fn derivative(&mut self, _t: f64, y: &[f64; 6]) -> [f64; 6] {
        let r = nalgebra::Point3::new(y[0], y[1], y[2]);
        let v = nalgebra::Vector3::new(y[3], y[4], y[5]);
        let (_, g) = self.b.gravity.potential_acceleration(&r);
        let a = g - 2.0 * self.w.cross(&v) - self.w.cross(&self.w.cross(&r.coords));
        [y[3], y[4], y[5], a.x, a.y, a.z]
    }
}
fn main() {
    let body = bench_body(3);
    let l = &bench_launches(&body, 3)[2];
    let mut sys = Sys { b: &body, w: body.omega_body_rad_s() };
    let rate = (body.gm_m3_s2() / body.shape.mass_properties().equivalent_radius_m.powi(3)).sqrt();
    let av = 1e-6 * rate;
    let tol = Tolerances { rel: 1e-10, abs: [1e-6, 1e-6, 1e-6, av, av, av] };
    let y0 = [l.pos_body_m.x, l.pos_body_m.y, l.pos_body_m.z, l.vel_body_m_s.x, l.vel_body_m_s.y, l.vel_body_m_s.z];
    let mut ode = Dop853::new(&mut sys, 0.0, y0, tol, 1e9);
    for _ in 0..40 {
        let rej = ode.rejected;
        ode.step(&mut sys, 1e6).unwrap();
        let p = nalgebra::Point3::new(ode.y()[0], ode.y()[1], ode.y()[2]);
        println!("t {:10.3} h {:9.4} rej {} alt {:.3}", ode.t(), ode.h_done(), ode.rejected - rej, body.shape.nearest_surface_point(&p).t * if body.shape.contains(&p) { -1.0 } else { 1.0 });
    }
}
