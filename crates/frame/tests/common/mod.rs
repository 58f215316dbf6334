//! Helpers shared by the integration tests.

use frame::{ColumnData, Frame};

/// Equal values, missing masks, codes, levels and line numbers.
pub fn assert_frames_equal(a: &Frame, b: &Frame) {
    assert_eq!(a.n_rows(), b.n_rows());
    assert_eq!(a.columns().len(), b.columns().len());
    for (ca, cb) in a.columns().iter().zip(b.columns()) {
        assert_eq!(ca.name, cb.name);
        match (&ca.data, &cb.data) {
            (ColumnData::Numeric(x), ColumnData::Numeric(y)) => {
                assert_eq!(x.missing, y.missing, "column {}", ca.name);
                for (u, v) in x.values.iter().zip(&y.values) {
                    assert!(u == v || (u.is_nan() && v.is_nan()), "column {}", ca.name);
                }
            }
            (ColumnData::Categorical(x), ColumnData::Categorical(y)) => {
                assert_eq!(x.codes, y.codes, "column {}", ca.name);
                assert_eq!(x.levels, y.levels, "column {}", ca.name);
                assert_eq!(x.text_in_numbers, y.text_in_numbers, "column {}", ca.name);
            }
            _ => panic!("column {} differs in type", ca.name),
        }
    }
    for r in 0..a.n_rows() {
        assert_eq!(a.line_of_row(r), b.line_of_row(r), "row {r}");
    }
}
