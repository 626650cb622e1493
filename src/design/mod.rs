//! Pavement and capacity design inputs (to be filled).
