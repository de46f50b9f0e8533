//! The desktop workbench.
