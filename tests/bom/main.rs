//! Board-level integer program: exact agreement with brute force, sharing, line-item
//! limits, infeasibility explanations and the renderers.
//!
//! Prices in these fixtures are illustrative, and chosen as multiples of 1/8 so every
//! sum is exact in floating point and totals can be compared with `==`.

mod brute_force;
mod design;
mod fast_feed;
mod fixtures;
mod optimum;
mod programmed;
mod random;
mod render;
