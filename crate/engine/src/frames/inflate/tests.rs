//! Tests of inflate.rs.

use super::*;
