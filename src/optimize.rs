//! The optimizer (being written).
