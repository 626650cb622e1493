//! Toll and shadow-toll reconciliation (to be filled).
