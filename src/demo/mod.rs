//! demo stage (to be filled).
