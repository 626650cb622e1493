//! spatial stage (to be filled).
