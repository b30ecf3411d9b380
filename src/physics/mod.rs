//! The physics layer: time scales, frames, Earth's ephemeris, sites, two-body motion, elements and the
//! observation model. Pure functions and plain data: nothing here reads files or knows about the console.

pub mod calendar;
pub mod constants;
pub mod dopri;
pub mod earth;
pub mod elements;
pub mod frames;
pub mod galaxy;
pub mod observe;
pub mod propagate;
pub mod sexagesimal;
pub mod site;
pub mod sky;
pub mod stumpff;
pub mod time;

/// Three-vector used throughout the physics layer (AU, AU/day or unit vectors, ICRF axes unless stated).
pub type V3 = nalgebra::Vector3<f64>;
/// 3×3 matrix (rotations, Jacobian blocks).
pub type M3 = nalgebra::Matrix3<f64>;
/// 6×6 matrix (state-transition matrices, state covariances).
pub type M6 = nalgebra::Matrix6<f64>;
/// Cartesian state (position AU, velocity AU/day).
pub type S6 = nalgebra::Vector6<f64>;

/// Position and velocity of a Cartesian state.
pub fn split_state(x: &S6) -> (V3, V3) {
    (
        x.fixed_rows::<3>(0).into_owned(),
        x.fixed_rows::<3>(3).into_owned(),
    )
}
