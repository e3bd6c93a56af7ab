//! Size limits on what a model may ask for, so that a mistaken or damaged
//! file gets a clear error instead of exhausting memory or time.
//!
//! Each limit is far above what a measurement model needs (the largest
//! published worked examples have tens of inputs) and can be raised: in a
//! program through [`Limits`], from the command line through the
//! environment variables named on each field. The parser's own limits
//! (formula length 1 MiB, nesting 256) are in `incertus_expr::Limits`; the
//! Monte Carlo memory estimate is checked against the free memory before
//! any allocation (`incertus_mc::memory_needed`).

/// The limits applied while loading and propagating.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Limits {
    /// Largest model file, in bytes (`INCERTUS_MAX_FILE_BYTES`).
    pub max_file_bytes: u64,
    /// Most input quantities (`INCERTUS_MAX_INPUTS`); the covariance of n
    /// inputs takes 8 n² bytes.
    pub max_inputs: usize,
    /// Most measurands (`INCERTUS_MAX_MEASURANDS`).
    pub max_measurands: usize,
    /// Largest formula of the inputs once measurands used by other
    /// measurands are substituted, in nodes (`INCERTUS_MAX_FORMULA_NODES`):
    /// substitution can double a formula at each level.
    pub max_formula_nodes: u64,
    /// Deepest such formula (`INCERTUS_MAX_FORMULA_DEPTH`).
    pub max_formula_depth: usize,
    /// Largest sensitivity-coefficient formula before simplification, in
    /// nodes (`INCERTUS_MAX_DERIVATIVE_NODES`).
    pub max_derivative_nodes: u64,
    /// Most data rows of a fit (`INCERTUS_MAX_DATA_ROWS`).
    pub max_data_rows: usize,
}

impl Default for Limits {
    fn default() -> Self {
        Limits {
            max_file_bytes: 16 << 20,
            max_inputs: 10_000,
            max_measurands: 1_000,
            max_formula_nodes: 1_000_000,
            max_formula_depth: 2_048,
            max_derivative_nodes: 4_000_000,
            max_data_rows: 10_000_000,
        }
    }
}

impl Limits {
    /// The defaults, with any limit raised or lowered by a setting named as
    /// its environment variable (`INCERTUS_MAX_INPUTS`, ...). `lookup`
    /// gives a setting's text; the library never reads the environment
    /// itself (the command line passes `std::env::var`). An unreadable
    /// value is an error naming the setting.
    ///
    /// ```
    /// use incertus_gum::Limits;
    /// let l = Limits::with_settings(|name| (name == "INCERTUS_MAX_INPUTS").then(|| "12".to_string()))
    ///     .unwrap();
    /// assert_eq!(l.max_inputs, 12);
    /// ```
    pub fn with_settings(lookup: impl Fn(&str) -> Option<String>) -> Result<Limits, String> {
        let mut l = Limits::default();
        let read = |name: &str, slot: &mut dyn FnMut(&str) -> bool| -> Result<(), String> {
            if let Some(v) = lookup(name) {
                if !slot(v.trim()) {
                    return Err(format!(
                        "environment variable {name}: `{v}` is not a whole number"
                    ));
                }
            }
            Ok(())
        };
        fn set<T: std::str::FromStr>(slot: &mut T) -> impl FnMut(&str) -> bool + '_ {
            move |t: &str| match t.parse() {
                Ok(v) => {
                    *slot = v;
                    true
                }
                Err(_) => false,
            }
        }
        read("INCERTUS_MAX_FILE_BYTES", &mut set(&mut l.max_file_bytes))?;
        read("INCERTUS_MAX_INPUTS", &mut set(&mut l.max_inputs))?;
        read("INCERTUS_MAX_MEASURANDS", &mut set(&mut l.max_measurands))?;
        read(
            "INCERTUS_MAX_FORMULA_NODES",
            &mut set(&mut l.max_formula_nodes),
        )?;
        read(
            "INCERTUS_MAX_FORMULA_DEPTH",
            &mut set(&mut l.max_formula_depth),
        )?;
        read(
            "INCERTUS_MAX_DERIVATIVE_NODES",
            &mut set(&mut l.max_derivative_nodes),
        )?;
        read("INCERTUS_MAX_DATA_ROWS", &mut set(&mut l.max_data_rows))?;
        Ok(l)
    }
}
