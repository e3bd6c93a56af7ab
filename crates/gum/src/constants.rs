//! Physical constants by explicit name, with their standard uncertainties.
//!
//! Values of the 2018 CODATA adjustment (E. Tiesinga, P. J. Mohr, D. B. Newell,
//! B. N. Taylor, Rev. Mod. Phys. 93, 025010 (2021); J. Phys. Chem. Ref. Data
//! 50, 033105 (2021)). The seven defining constants of the SI (SI Brochure,
//! 9th edition, 2019, Table 1) and constants derived from them alone are
//! exact. The digits below were recalled from memory and checked against one
//! another in the tests (for example μ0 = 2αh/(e²c) and ε0 = 1/(μ0 c²));
//! a laboratory must verify them against the published adjustment before
//! relying on them, and may state its own values as ordinary inputs instead.
//! The 2022 adjustment changed several of the measured values in the last
//! digits; it is not used here.

/// One constant of the table.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Constant {
    /// The name used in model files, e.g. `"k_B"`.
    pub name: &'static str,
    /// What it is.
    pub title: &'static str,
    /// The value in SI units.
    pub value: f64,
    /// Standard uncertainty (0 for exact constants).
    pub standard_uncertainty: f64,
    /// SI unit, in the notation of the SI Brochure.
    pub unit: &'static str,
}

impl Constant {
    /// Whether the value is exact (a defining constant of the SI).
    pub fn is_exact(&self) -> bool {
        self.standard_uncertainty == 0.0
    }
}

/// Which adjustment the table holds.
pub const ADJUSTMENT: &str = "CODATA 2018";

const PI: f64 = std::f64::consts::PI;
const K_B: f64 = 1.380649e-23;
const H: f64 = 6.62607015e-34;
const C: f64 = 299792458.0;
/// σ = 2π⁵k⁴/(15h³c²), exact in the SI (SI Brochure, 9th edition).
const SIGMA: f64 =
    2.0 * PI * PI * PI * PI * PI * K_B * K_B * K_B * K_B / (15.0 * H * H * H * C * C);

/// The table.
pub const TABLE: &[Constant] = &[
    Constant {
        name: "c",
        title: "speed of light in vacuum",
        value: 299792458.0,
        standard_uncertainty: 0.0,
        unit: "m s^-1",
    },
    Constant {
        name: "h",
        title: "Planck constant",
        value: 6.62607015e-34,
        standard_uncertainty: 0.0,
        unit: "J s",
    },
    Constant {
        name: "hbar",
        title: "reduced Planck constant",
        value: 6.62607015e-34 / (2.0 * std::f64::consts::PI),
        standard_uncertainty: 0.0,
        unit: "J s",
    },
    Constant {
        name: "e",
        title: "elementary charge",
        value: 1.602176634e-19,
        standard_uncertainty: 0.0,
        unit: "C",
    },
    Constant {
        name: "k_B",
        title: "Boltzmann constant",
        value: 1.380649e-23,
        standard_uncertainty: 0.0,
        unit: "J K^-1",
    },
    Constant {
        name: "N_A",
        title: "Avogadro constant",
        value: 6.02214076e23,
        standard_uncertainty: 0.0,
        unit: "mol^-1",
    },
    Constant {
        name: "Delta_nu_Cs",
        title: "hyperfine transition frequency of Cs-133",
        value: 9192631770.0,
        standard_uncertainty: 0.0,
        unit: "Hz",
    },
    Constant {
        name: "K_cd",
        title: "luminous efficacy of 540 THz radiation",
        value: 683.0,
        standard_uncertainty: 0.0,
        unit: "lm W^-1",
    },
    Constant {
        name: "R",
        title: "molar gas constant (N_A k_B)",
        value: 6.02214076e23 * 1.380649e-23,
        standard_uncertainty: 0.0,
        unit: "J mol^-1 K^-1",
    },
    Constant {
        name: "F",
        title: "Faraday constant (N_A e)",
        value: 6.02214076e23 * 1.602176634e-19,
        standard_uncertainty: 0.0,
        unit: "C mol^-1",
    },
    Constant {
        name: "alpha",
        title: "fine-structure constant",
        value: 7.2973525693e-3,
        standard_uncertainty: 0.0000000011e-3,
        unit: "1",
    },
    Constant {
        name: "mu_0",
        title: "vacuum magnetic permeability",
        value: 1.25663706212e-6,
        standard_uncertainty: 0.00000000019e-6,
        unit: "N A^-2",
    },
    Constant {
        name: "epsilon_0",
        title: "vacuum electric permittivity",
        value: 8.8541878128e-12,
        standard_uncertainty: 0.0000000013e-12,
        unit: "F m^-1",
    },
    Constant {
        name: "m_e",
        title: "electron mass",
        value: 9.1093837015e-31,
        standard_uncertainty: 0.0000000028e-31,
        unit: "kg",
    },
    Constant {
        name: "m_p",
        title: "proton mass",
        value: 1.67262192369e-27,
        standard_uncertainty: 0.00000000051e-27,
        unit: "kg",
    },
    Constant {
        name: "m_u",
        title: "atomic mass constant",
        value: 1.66053906660e-27,
        standard_uncertainty: 0.00000000050e-27,
        unit: "kg",
    },
    Constant {
        name: "G",
        title: "Newtonian constant of gravitation",
        value: 6.67430e-11,
        standard_uncertainty: 0.00015e-11,
        unit: "m^3 kg^-1 s^-2",
    },
    Constant {
        name: "a_0",
        title: "Bohr radius",
        value: 5.29177210903e-11,
        standard_uncertainty: 0.00000000080e-11,
        unit: "m",
    },
    Constant {
        name: "R_inf",
        title: "Rydberg constant",
        value: 10973731.568160,
        standard_uncertainty: 0.000021,
        unit: "m^-1",
    },
    Constant {
        name: "sigma",
        title: "Stefan-Boltzmann constant",
        value: SIGMA,
        standard_uncertainty: 0.0,
        unit: "W m^-2 K^-4",
    },
    Constant {
        name: "g_n",
        title: "standard acceleration of gravity (conventional, exact)",
        value: 9.80665,
        standard_uncertainty: 0.0,
        unit: "m s^-2",
    },
    Constant {
        name: "debye",
        title: "debye (10^-21/c C m, conventional, exact)",
        value: 1e-21 / 299792458.0,
        standard_uncertainty: 0.0,
        unit: "C m",
    },
];

/// Look a constant up by its name.
pub fn find(name: &str) -> Option<&'static Constant> {
    TABLE.iter().find(|c| c.name == name)
}
