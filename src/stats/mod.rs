//! Statistics: how unlikely a passage is between unrelated melodies.
//!
//! - [`shuffle`]: doublet-preserving shuffles of a melody (Altschul & Erickson 1985).
//! - [`gumbel`]: the extreme-value distribution of local alignment maxima (Karlin & Altschul
//!   1990), fitted by moments.
//! - [`null`]: the shuffle null model of a comparison and the E-value and p-values of its
//!   passages.
//! - [`reference`]: a length-corrected null fitted on real unrelated melodies (Pearson 1998).
//! - [`chance`]: which null gives a comparison's chance figures, and what it rests on.
//!
//! ```
//! use collatio::stats::gumbel::Gumbel;
//! let g = Gumbel { lambda: 0.2, mu: 50.0 };
//! // Ten points above the mode: E = e^(−2).
//! assert!((g.e_value(60.0) - (-2.0f64).exp()).abs() < 1e-12);
//! ```

pub mod chance;
pub mod gumbel;
pub mod null;
pub mod reference;
pub mod shuffle;
pub mod significance;
