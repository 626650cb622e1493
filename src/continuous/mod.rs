//! continuous stage (to be filled).
