//! expansion stage (to be filled).
