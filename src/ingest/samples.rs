//! What a reader gives before the record is built: integer codes on the converter's grid, or values
//! (voltages, floats) with no code grid, which the record holds in units of full scale.

/// The samples a reader decoded.
#[derive(Debug, Clone, PartialEq)]
pub enum Samples {
    /// Signed N-bit codes centred on mid-scale.
    Codes(Vec<i32>),
    /// Values with no code grid: volts, or units of full scale for float audio formats.
    Values(Vec<f64>),
}

impl Samples {
    /// Number of samples.
    pub fn len(&self) -> usize {
        match self {
            Samples::Codes(c) => c.len(),
            Samples::Values(v) => v.len(),
        }
    }

    /// True when there are no samples.
    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }
}
