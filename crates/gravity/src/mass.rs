//! Mass properties of the homogeneous (constant-density) polyhedron.
//!
//! Method: the solid is the signed sum of tetrahedra joining a reference point to each face.
//! For a tetrahedron with corners 0, a, b, c (relative to the reference) and `det = a . (b x c)`:
//! volume `det / 6`, first moment `det / 24 * (a + b + c)`, and second moment
//! `∫ x xᵀ dV = det / 120 * (a aᵀ + b bᵀ + c cᵀ + s sᵀ)` with `s = a + b + c` — the covariance
//! form of the exact tetrahedron inertia formulas of Tonon (2004), "Explicit exact formulas for
//! the 3-D tetrahedron inertia tensor in terms of its vertex coordinates", J. Math. Stat. 1(1).
//! The inertia tensor is `tr(C) I - C` with `C` the second moment about the centre of mass.
//! The reference point is the mean vertex, which limits cancellation for bodies far from the
//! origin.

use nalgebra::{Matrix3, Point3, Vector3};
use serde::Serialize;

use crate::mesh::Mesh;

/// Mass properties of a closed, outward-oriented mesh of unit density (multiply by the density
/// for masses and moments).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MassProperties {
    /// Enclosed volume, m^3.
    pub volume_m3: f64,
    /// Surface area, m^2.
    pub area_m2: f64,
    /// Centre of mass (= centroid of the solid), body frame, m.
    pub center_of_mass_m: Point3<f64>,
    /// Inertia tensor about the centre of mass per unit density, m^5 (times kg/m^3 = kg m^2).
    pub inertia_per_density_m5: Matrix3<f64>,
    /// Principal moments per unit density, m^5, ascending.
    pub principal_moments_per_density_m5: Vector3<f64>,
    /// Principal axes: column `i` is the unit axis of moment `i`; a right-handed rotation matrix.
    pub principal_axes: Matrix3<f64>,
    /// Radius of the sphere of equal volume, m.
    pub equivalent_radius_m: f64,
    /// Radius of the smallest sphere about the centre of mass enclosing every vertex, m.
    pub brillouin_radius_m: f64,
}

impl MassProperties {
    /// Computes the mass properties of `mesh`, which must be closed and outward-oriented
    /// (as a [`crate::ShapeModel`]'s mesh is).
    pub fn of_mesh(mesh: &Mesh) -> MassProperties {
        let r0 = reference_point(&mesh.vertices_m);
        let mut six_volume = 0.0;
        let mut first = Vector3::zeros(); // 24 * first moment
        let mut second = Matrix3::zeros(); // 120 * second moment
        let mut twice_area = 0.0;
        for face in &mesh.faces {
            let [a, b, c] = face.map(|v| mesh.vertices_m[v as usize] - r0);
            let cross = b.cross(&c);
            let det = a.dot(&cross);
            let s = a + b + c;
            six_volume += det;
            first += s * det;
            second +=
                (a * a.transpose() + b * b.transpose() + c * c.transpose() + s * s.transpose())
                    * det;
            twice_area += (b - a).cross(&(c - a)).norm();
        }
        let volume_m3 = six_volume / 6.0;
        let offset = first / 24.0 / volume_m3;
        let second_ref = second / 120.0;
        // Parallel-axis shift of the second moment from the reference point to the centre of mass.
        let second_com = second_ref - offset * offset.transpose() * volume_m3;
        let second_com = (second_com + second_com.transpose()) * 0.5;
        let inertia = Matrix3::identity() * second_com.trace() - second_com;
        let center_of_mass_m = r0 + offset;
        let (principal_moments_per_density_m5, principal_axes) = principal(&inertia);
        let brillouin_radius_m = mesh
            .vertices_m
            .iter()
            .map(|p| (p - center_of_mass_m).norm())
            .fold(0.0, f64::max);
        MassProperties {
            volume_m3,
            area_m2: twice_area / 2.0,
            center_of_mass_m,
            inertia_per_density_m5: inertia,
            principal_moments_per_density_m5,
            principal_axes,
            equivalent_radius_m: (3.0 * volume_m3 / (4.0 * std::f64::consts::PI)).cbrt(),
            brillouin_radius_m,
        }
    }

    /// Inertia tensor about the centre of mass for bulk density `density_kg_m3`, kg m^2.
    pub fn inertia_kg_m2(&self, density_kg_m3: f64) -> Matrix3<f64> {
        self.inertia_per_density_m5 * density_kg_m3
    }

    /// Mass for bulk density `density_kg_m3`, kg.
    pub fn mass_kg(&self, density_kg_m3: f64) -> f64 {
        self.volume_m3 * density_kg_m3
    }
}

/// Mean of the points (origin if there are none); used as a reference to limit cancellation.
pub(crate) fn reference_point(points: &[Point3<f64>]) -> Point3<f64> {
    if points.is_empty() {
        return Point3::origin();
    }
    let sum = points
        .iter()
        .fold(Vector3::zeros(), |acc, p| acc + p.coords);
    Point3::from(sum / points.len() as f64)
}

/// Ascending eigenvalues and matching unit eigenvectors (columns) forming a right-handed frame;
/// each of the first two axes has its largest component positive, for reproducibility.
fn principal(inertia: &Matrix3<f64>) -> (Vector3<f64>, Matrix3<f64>) {
    let eigen = nalgebra::SymmetricEigen::new(*inertia);
    let mut order = [0usize, 1, 2];
    order.sort_by(|&i, &j| eigen.eigenvalues[i].total_cmp(&eigen.eigenvalues[j]));
    let moments = Vector3::new(
        eigen.eigenvalues[order[0]],
        eigen.eigenvalues[order[1]],
        eigen.eigenvalues[order[2]],
    );
    let mut axes = Matrix3::zeros();
    for (k, &i) in order.iter().enumerate().take(2) {
        let mut v: Vector3<f64> = eigen.eigenvectors.column(i).normalize();
        let largest = v.iamax();
        if v[largest] < 0.0 {
            v = -v;
        }
        axes.set_column(k, &v);
    }
    let third = axes.column(0).cross(&axes.column(1)).normalize();
    axes.set_column(2, &third);
    (moments, axes)
}
