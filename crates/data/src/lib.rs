//! Galaxy tables.
