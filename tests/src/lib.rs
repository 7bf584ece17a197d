//! Shared helpers for the workspace-level tests.
