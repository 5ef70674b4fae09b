//! frontend (to be written).
