//! (module under construction in this change)
