//! features (to be written).
