//! detect: CFAR, micro-Doppler energy detector, clustering, tracks.

pub mod microdoppler;
