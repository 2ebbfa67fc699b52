//! The triangle and line rasterizer working on horizontal bands of the framebuffer.
//!
//! Depth keys: smaller is closer. Perspective cameras store `-1/d` (affine in screen space, so
//! linear interpolation over a triangle is perspective-correct), orthographic cameras store the
//! view depth `d` itself (already affine). `d` is the distance along the view direction, metres.

use crate::color::Color;

/// Rows per band; each band is owned by one rayon task.
pub(crate) const BAND_H: usize = 16;
/// Sub-pixel precision of triangle vertices (1/16 px).
const SUB: f32 = 16.0;
/// Largest accepted |coordinate| of a triangle vertex, pixels (keeps edge functions exact in i64).
pub(crate) const MAX_COORD_PX: f32 = 4.0e6;

/// A transformed vertex: pixel position snapped to 1/16 px (`ix`, `iy`; [`INVALID`] when the
/// vertex is behind the near plane or too far off-screen), depth key, brightness.
#[derive(Clone, Copy, Debug, Default)]
pub(crate) struct SVert {
    pub ix: i32,
    pub iy: i32,
    pub key: f32,
    pub shade: f32,
}

/// Marks a vertex that cannot be drawn.
pub(crate) const INVALID: i32 = i32::MIN;

impl SVert {
    /// A vertex at pixel position `(x, y)`; invalid when not finite or beyond [`MAX_COORD_PX`].
    #[inline]
    pub fn new(x: f32, y: f32, key: f32, shade: f32) -> SVert {
        let ok = x.abs() <= MAX_COORD_PX && y.abs() <= MAX_COORD_PX && !key.is_nan();
        if ok {
            SVert {
                ix: fx(x),
                iy: fx(y),
                key,
                shade,
            }
        } else {
            SVert {
                ix: INVALID,
                iy: INVALID,
                key: f32::NAN,
                shade,
            }
        }
    }
}

/// A set-up triangle, screen space (shading and wireframe are per job, see the pipeline).
#[derive(Clone, Copy, Debug)]
pub(crate) struct TriRec {
    /// Vertex positions in 1/16 px.
    pub ix: [i32; 3],
    pub iy: [i32; 3],
    pub key: [f32; 3],
    /// Final colour (flat) or base colour (smooth).
    pub color: Color,
    /// Face index (for the id buffer).
    pub face: u32,
}

/// A triangle small enough to be resolved at set-up: one covered pixel.
#[derive(Clone, Copy, Debug)]
pub(crate) struct PointRec {
    /// Pixel index in the whole frame.
    pub idx: u32,
    pub key: f32,
    pub color: Color,
    pub face: u32,
}

/// Pixel-centre bounding box of a triangle, clipped to the `w x h` frame: x0, x1, y0, y1
/// inclusive. Pixel `x` has its centre at `16 x + 8` in 1/16 px.
#[inline]
pub(crate) fn pixel_bbox(ix: [i32; 3], iy: [i32; 3], w: i32, h: i32) -> Option<[u32; 4]> {
    let xmin = ix[0].min(ix[1]).min(ix[2]);
    let xmax = ix[0].max(ix[1]).max(ix[2]);
    let ymin = iy[0].min(iy[1]).min(iy[2]);
    let ymax = iy[0].max(iy[1]).max(iy[2]);
    // ceil((v - 8) / 16) and floor((v - 8) / 16) with arithmetic shifts.
    let x0 = ((xmin + 7) >> 4).max(0);
    let x1 = ((xmax - 8) >> 4).min(w - 1);
    let y0 = ((ymin + 7) >> 4).max(0);
    let y1 = ((ymax - 8) >> 4).min(h - 1);
    (x0 <= x1 && y0 <= y1).then_some([x0 as u32, x1 as u32, y0 as u32, y1 as u32])
}

/// Edge functions and attribute planes of a triangle, evaluated from pixel centre (x_lo, y_lo).
pub(crate) struct Setup {
    /// Edge values at the start pixel (fixed point, exact), non-negative inside.
    pub e: [i64; 3],
    pub ex: [i64; 3],
    pub ey: [i64; 3],
    /// Depth key at the start pixel and its steps.
    pub z: f32,
    pub zx: f32,
    pub zy: f32,
    /// Inverse edge lengths for wireframe distances (pixels per edge unit).
    pub inv_len: [f32; 3],
}

/// Gradient of an attribute over the triangle and its value at pixel centre (x_lo, y_lo).
#[inline]
pub(crate) fn plane(t: &TriRec, f: [f32; 3], x_lo: u32, y_lo: u32) -> Option<(f32, f32, f32)> {
    const S: f32 = 1.0 / 16.0;
    let (x0, y0) = (t.ix[0] as f32 * S, t.iy[0] as f32 * S);
    let (dx1, dy1) = (
        (t.ix[1] - t.ix[0]) as f32 * S,
        (t.iy[1] - t.iy[0]) as f32 * S,
    );
    let (dx2, dy2) = (
        (t.ix[2] - t.ix[0]) as f32 * S,
        (t.iy[2] - t.iy[0]) as f32 * S,
    );
    let det = dx1 * dy2 - dx2 * dy1;
    if det == 0.0 || !det.is_finite() {
        return None;
    }
    let inv = 1.0 / det;
    let (f1, f2) = (f[1] - f[0], f[2] - f[0]);
    let gx = (f1 * dy2 - f2 * dy1) * inv;
    let gy = (f2 * dx1 - f1 * dx2) * inv;
    let start = f[0] + gx * (x_lo as f32 + 0.5 - x0) + gy * (y_lo as f32 + 0.5 - y0);
    Some((gx, gy, start))
}

/// Fixed-point edge functions of a triangle at pixel centre `(x_lo, y_lo)` and their x and y
/// steps, oriented so that inside is non-negative; `None` for zero area. Exact integer
/// arithmetic, so two triangles sharing an edge leave no crack.
#[inline]
pub(crate) fn edges(
    ix: [i32; 3],
    iy: [i32; 3],
    x_lo: u32,
    y_lo: u32,
) -> Option<([i64; 3], [i64; 3], [i64; 3])> {
    let (ax, ay) = (ix[0] as i64, iy[0] as i64);
    let (bx, by) = (ix[1] as i64, iy[1] as i64);
    let (cx, cy) = (ix[2] as i64, iy[2] as i64);
    let area = (bx - ax) * (cy - ay) - (by - ay) * (cx - ax);
    if area == 0 {
        return None;
    }
    let sign: i64 = if area < 0 { -1 } else { 1 };
    let pxc = x_lo as i64 * 16 + 8;
    let pyc = y_lo as i64 * 16 + 8;
    // E_ab(p) = (b - a) x (p - a); edge k is opposite vertex k.
    let edge = |px0: i64, py0: i64, px1: i64, py1: i64| {
        let e = ((px1 - px0) * (pyc - py0) - (py1 - py0) * (pxc - px0)) * sign;
        (e, -(py1 - py0) * sign * 16, (px1 - px0) * sign * 16)
    };
    let (e0, e0x, e0y) = edge(bx, by, cx, cy);
    let (e1, e1x, e1y) = edge(cx, cy, ax, ay);
    let (e2, e2x, e2y) = edge(ax, ay, bx, by);
    Some(([e0, e1, e2], [e0x, e1x, e2x], [e0y, e1y, e2y]))
}

/// Sets up the edge functions and the depth plane of `t`, starting at pixel centre
/// `(x_lo, y_lo)`; with `want_len`, also the inverse edge lengths for wireframes.
#[inline]
pub(crate) fn setup_edges(t: &TriRec, x_lo: u32, y_lo: u32, want_len: bool) -> Option<Setup> {
    let (e, ex, ey) = edges(t.ix, t.iy, x_lo, y_lo)?;
    let (zx, zy, z) = plane(t, t.key, x_lo, y_lo)?;
    let inv_len = if want_len {
        let len = |i: usize, j: usize| {
            let dx = (t.ix[j] - t.ix[i]) as f32;
            let dy = (t.iy[j] - t.iy[i]) as f32;
            // E is in (1/16 px)^2; distance in px = E / (16 * |edge in 1/16 px|).
            1.0 / (16.0 * (dx * dx + dy * dy).sqrt().max(1e-6))
        };
        [len(1, 2), len(2, 0), len(0, 1)]
    } else {
        [0.0; 3]
    };
    Some(Setup {
        e,
        ex,
        ey,
        z,
        zx,
        zy,
        inv_len,
    })
}

/// A set-up line segment, screen space.
#[derive(Clone, Copy, Debug)]
pub(crate) struct SegRec {
    pub x0: f32,
    pub y0: f32,
    pub x1: f32,
    pub y1: f32,
    pub k0: f32,
    pub k1: f32,
    pub c0: Color,
    pub c1: Color,
    /// Half width, pixels.
    pub hw: f32,
    /// Screen length of the polyline before this segment, pixels (for dashes).
    pub s0: f32,
    /// `(on, off)` pixels, or `(0, 0)` for solid.
    pub dash: (f32, f32),
    /// Opacity of hidden parts (0 = not drawn).
    pub hidden_alpha: f32,
}

/// One band of the framebuffer.
pub(crate) struct Band<'a> {
    pub color: &'a mut [Color],
    pub depth: &'a mut [f32],
    /// Face id + 1 per pixel and mesh index, or empty when ids are not wanted.
    pub ids: &'a mut [(u32, u32)],
    pub width: usize,
    pub y0: usize,
    pub rows: usize,
}

/// Depth test tolerance for lines and markers against the meshes, in key space.
#[derive(Clone, Copy, Debug)]
pub(crate) struct DepthBias {
    /// Perspective: visible iff `k <= stored * factor` (keys are `-1/d`, factor = 1/(1+rel)).
    /// Orthographic: visible iff `k <= stored + absolute + rel * |stored|`.
    pub perspective: bool,
    pub factor: f32,
    pub rel: f32,
    pub absolute: f32,
}

impl DepthBias {
    /// Whether a point at key `k` is visible against the stored key `stored`.
    #[inline]
    pub fn visible(&self, k: f32, stored: f32) -> bool {
        if self.perspective {
            k <= stored * self.factor
        } else {
            k <= stored + self.absolute + self.rel * stored.abs()
        }
    }
}

/// Fixed-point (1/16 px) coordinate, rounded to nearest with ties to even.
#[inline]
fn fx(v: f32) -> i32 {
    // Round to nearest (ties to even) by adding 1.5 * 2^52 in f64: the integer lands in the low
    // mantissa bits. Exact for |v * 16| < 2^51; callers keep |v| <= MAX_COORD_PX.
    const MAGIC: f64 = 6_755_399_441_055_744.0;
    ((v * SUB) as f64 + MAGIC).to_bits() as i64 as i32
}

/// `floor` without a libm call (the baseline x86-64 target has no rounding instruction).
/// Valid for |x| < 2^31.
#[inline]
pub(crate) fn floor_f(x: f32) -> f32 {
    let i = x as i32 as f32;
    if i > x { i - 1.0 } else { i }
}

/// `ceil` without a libm call. Valid for |x| < 2^31.
#[inline]
pub(crate) fn ceil_f(x: f32) -> f32 {
    let i = x as i32 as f32;
    if i < x { i + 1.0 } else { i }
}

impl Band<'_> {
    /// Writes a set-up pixel (z-buffered).
    #[inline]
    pub fn point(&mut self, p: &PointRec, mesh: u32) {
        let i = p.idx as usize - self.y0 * self.width;
        if let Some(d) = self.depth.get_mut(i)
            && p.key < *d
        {
            *d = p.key;
            self.color[i] = p.color;
            if let Some(id) = self.ids.get_mut(i) {
                *id = (p.face + 1, mesh);
            }
        }
    }

    /// Rasterizes one triangle into this band (z-buffered, opaque). `shade` holds per-vertex
    /// brightness for smooth shading.
    #[inline]
    pub fn triangle(
        &mut self,
        t: &TriRec,
        shade: Option<[f32; 3]>,
        wire: Option<Color>,
        mesh: u32,
        frame_h: usize,
    ) {
        let Some(bb) = pixel_bbox(t.ix, t.iy, self.width as i32, frame_h as i32) else {
            return;
        };
        let y_lo = (bb[2] as usize).max(self.y0);
        let y_hi = (bb[3] as usize).min(self.y0 + self.rows - 1);
        if y_lo > y_hi {
            return;
        }
        let (x_lo, x_hi) = (bb[0] as usize, bb[1] as usize);
        let Some(st) = setup_edges(t, x_lo as u32, y_lo as u32, wire.is_some()) else {
            return;
        };
        let (sx, sy, mut sr) = shade
            .and_then(|s| plane(t, s, x_lo as u32, y_lo as u32))
            .unwrap_or((0.0, 0.0, 1.0));
        let smooth = shade.is_some();
        let [mut e0r, mut e1r, mut e2r] = st.e;
        let mut zr = st.z;
        let w = self.width;
        let want_ids = !self.ids.is_empty();
        for y in y_lo..=y_hi {
            let row = (y - self.y0) * w;
            let (mut e0, mut e1, mut e2) = (e0r, e1r, e2r);
            let (mut z, mut s) = (zr, sr);
            for x in x_lo..=x_hi {
                if (e0 | e1 | e2) >= 0 {
                    let i = row + x;
                    if z < self.depth[i] {
                        self.depth[i] = z;
                        let mut c = if smooth { t.color.scaled(s) } else { t.color };
                        if let Some(wc) = wire {
                            let d = (e0 as f32 * st.inv_len[0])
                                .min(e1 as f32 * st.inv_len[1])
                                .min(e2 as f32 * st.inv_len[2]);
                            if d < 0.75 {
                                c = wc.over(c, 1.0);
                            }
                        }
                        self.color[i] = c;
                        if want_ids {
                            self.ids[i] = (t.face + 1, mesh);
                        }
                    }
                }
                e0 += st.ex[0];
                e1 += st.ex[1];
                e2 += st.ex[2];
                z += st.zx;
                s += sx;
            }
            e0r += st.ey[0];
            e1r += st.ey[1];
            e2r += st.ey[2];
            zr += st.zy;
            sr += sy;
        }
    }

    /// Draws one line segment into this band (depth-tested, not depth-writing, alpha blended).
    pub fn segment(&mut self, s: &SegRec, bias: &DepthBias) {
        let (dx, dy) = (s.x1 - s.x0, s.y1 - s.y0);
        let len = (dx * dx + dy * dy).sqrt();
        if s.hw <= 1.5 && len > 1e-3 {
            self.thin_segment(s, bias, dx, dy, len);
            return;
        }
        let hw = s.hw;
        let (ux, uy) = if len > 1e-6 {
            (dx / len, dy / len)
        } else {
            (1.0, 0.0)
        };
        let (nx, ny) = (-uy, ux);
        let dashed = s.dash.0 > 0.0;
        let cap = if dashed { 0.0 } else { 0.5 * hw };
        // Rows whose pixel centres can be within reach of the segment.
        let reach = hw + cap;
        let y_min = ceil_f((s.y0.min(s.y1) - reach - 0.5).max(self.y0 as f32));
        let y_max = floor_f((s.y0.max(s.y1) + reach - 0.5).min((self.y0 + self.rows - 1) as f32));
        if y_min.is_nan() || y_max.is_nan() || y_min > y_max {
            return;
        }
        let w = self.width;
        let period = s.dash.0 + s.dash.1;
        let inv_len = if len > 1e-6 { 1.0 / len } else { 0.0 };
        let dk = s.k1 - s.k0;
        let solid = s.c0 == s.c1;
        let a_vis = (s.c0.a as u32 * 256 + 127) / 255; // 0..=256
        let a_hid = ((s.hidden_alpha * a_vis as f32) + 0.5) as u32;
        let blend = |dst: Color, src: Color, a: u32| -> Color {
            let m = |s: u8, d: u8| ((d as u32 * (256 - a) + s as u32 * a + 128) >> 8) as u8;
            Color::rgba(m(src.r, dst.r), m(src.g, dst.g), m(src.b, dst.b), dst.a)
        };
        // Slabs a <= k * px + c <= b with px relative to x0: |n.p| <= hw, -cap <= u.p <= len + cap.
        let n_flat = nx.abs() < 1e-6;
        let u_flat = ux.abs() < 1e-6;
        let inv_nx = if n_flat { 0.0 } else { 1.0 / nx };
        let inv_ux = if u_flat { 0.0 } else { 1.0 / ux };
        let x_max = w as f32 - 1.0;
        for y in (y_min as usize)..=(y_max as usize) {
            let py = y as f32 + 0.5 - s.y0;
            let mut lo = f32::NEG_INFINITY;
            let mut hi = f32::INFINITY;
            let cn = ny * py;
            if n_flat {
                if cn.abs() > hw {
                    continue;
                }
            } else {
                let (p, q) = ((-hw - cn) * inv_nx, (hw - cn) * inv_nx);
                lo = lo.max(p.min(q));
                hi = hi.min(p.max(q));
            }
            let cu = uy * py;
            if u_flat {
                if cu < -cap || cu > len + cap {
                    continue;
                }
            } else {
                let (p, q) = ((-cap - cu) * inv_ux, (len + cap - cu) * inv_ux);
                lo = lo.max(p.min(q));
                hi = hi.min(p.max(q));
            }
            let xa = (lo + s.x0 - 0.5).max(0.0);
            let xb = (hi + s.x0 - 0.5).min(x_max);
            if xa.is_nan() || xb.is_nan() || xa > xb {
                continue;
            }
            let (xa, xb) = (ceil_f(xa), floor_f(xb));
            if xa > xb {
                continue;
            }
            let row = (y - self.y0) * w;
            let px0 = xa + 0.5 - s.x0;
            let mut along = ux * px0 + uy * py;
            for x in (xa as usize)..=(xb as usize) {
                let t = (along * inv_len).clamp(0.0, 1.0);
                along += ux;
                if dashed && (s.s0 + t * len).rem_euclid(period) >= s.dash.0 {
                    continue;
                }
                let i = row + x;
                let k = s.k0 + dk * t;
                let a = if bias.visible(k, self.depth[i]) {
                    a_vis
                } else {
                    a_hid
                };
                if a == 0 {
                    continue;
                }
                let c = if solid { s.c0 } else { s.c0.lerp(s.c1, t) };
                self.color[i] = blend(self.color[i], c, a);
            }
        }
    }

    /// Thin lines (up to 3 px): walk the major axis one pixel at a time and fill the pixels whose
    /// centres are within the half width measured along the minor axis.
    fn thin_segment(&mut self, s: &SegRec, bias: &DepthBias, dx: f32, dy: f32, len: f32) {
        let w = self.width;
        let dashed = s.dash.0 > 0.0;
        let period = s.dash.0 + s.dash.1;
        let cap = if dashed { 0.0 } else { 0.5 * s.hw };
        let dk = s.k1 - s.k0;
        let solid = s.c0 == s.c1;
        let a_vis = (s.c0.a as u32 * 256 + 127) / 255; // 0..=256
        let a_hid = ((s.hidden_alpha * a_vis as f32) + 0.5) as u32;
        let band_lo = self.y0 as f32;
        let band_hi = (self.y0 + self.rows - 1) as f32;
        let x_max = w as f32 - 1.0;
        // Draws pixel (x, y) at parameter t along the segment.
        let plot = |color: &mut [Color], depth: &[f32], x: usize, y: usize, t: f32| {
            let t = t.clamp(0.0, 1.0);
            if dashed && (s.s0 + t * len).rem_euclid(period) >= s.dash.0 {
                return;
            }
            let i = (y - self.y0) * w + x;
            let a = if bias.visible(s.k0 + dk * t, depth[i]) {
                a_vis
            } else {
                a_hid
            };
            if a == 0 {
                return;
            }
            let c = if solid { s.c0 } else { s.c0.lerp(s.c1, t) };
            let d = color[i];
            let m = |s: u8, d: u8| ((d as u32 * (256 - a) + s as u32 * a + 128) >> 8) as u8;
            color[i] = Color::rgba(m(c.r, d.r), m(c.g, d.g), m(c.b, d.b), d.a);
        };
        if dx.abs() >= dy.abs() {
            // x-major: columns, with a vertical half thickness.
            let slope = dy / dx;
            let hv = s.hw * (1.0 + slope * slope).sqrt();
            let cap_x = cap * dx.abs() / len;
            let mut xa = s.x0.min(s.x1) - cap_x;
            let mut xb = s.x0.max(s.x1) + cap_x;
            // Only columns whose centre line comes within reach of this band's rows.
            if slope.abs() > 1e-6 {
                let ya = band_lo + 0.5 - hv - 0.5;
                let yb = band_hi + 0.5 + hv + 0.5;
                let (p, q) = (s.x0 + (ya - s.y0) / slope, s.x0 + (yb - s.y0) / slope);
                xa = xa.max(p.min(q));
                xb = xb.min(p.max(q));
            }
            let xa = ceil_f((xa - 0.5).max(0.0));
            let xb = floor_f((xb - 0.5).min(x_max));
            if xa.is_nan() || xb.is_nan() || xa > xb {
                return;
            }
            let inv_dx = 1.0 / dx;
            for x in (xa as usize)..=(xb as usize) {
                let px = x as f32 + 0.5;
                let t = (px - s.x0) * inv_dx;
                let yc = s.y0 + slope * (px - s.x0);
                let y_lo = ceil_f((yc - hv - 0.5).max(band_lo));
                let y_hi = floor_f((yc + hv - 0.5).min(band_hi));
                if y_lo > y_hi {
                    continue;
                }
                for y in (y_lo as usize)..=(y_hi as usize) {
                    plot(self.color, self.depth, x, y, t);
                }
            }
        } else {
            // y-major: rows of this band, with a horizontal half thickness.
            let slope = dx / dy;
            let hh = s.hw * (1.0 + slope * slope).sqrt();
            let cap_y = cap * dy.abs() / len;
            let ya = ceil_f((s.y0.min(s.y1) - cap_y - 0.5).max(band_lo));
            let yb = floor_f((s.y0.max(s.y1) + cap_y - 0.5).min(band_hi));
            if ya.is_nan() || yb.is_nan() || ya > yb {
                return;
            }
            let inv_dy = 1.0 / dy;
            for y in (ya as usize)..=(yb as usize) {
                let py = y as f32 + 0.5;
                let t = (py - s.y0) * inv_dy;
                let xc = s.x0 + slope * (py - s.y0);
                let x_lo = ceil_f((xc - hh - 0.5).max(0.0));
                let x_hi = floor_f((xc + hh - 0.5).min(x_max));
                if x_lo > x_hi {
                    continue;
                }
                for x in (x_lo as usize)..=(x_hi as usize) {
                    plot(self.color, self.depth, x, y, t);
                }
            }
        }
    }
}
