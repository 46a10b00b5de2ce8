//! Tests of tiff_frame.rs.

use super::*;
