//! Tests of png_frame.rs.

use super::*;
