//! The built-in compounds table: ions with their charge and limiting equivalent conductivity,
//! and the compounds a lab weighs out (salts, neutral solutes, buffers, titrants) as the ions
//! one formula unit gives in water. Data only; `catalog` adds a scenario's own compounds.

/// One ion (or neutral particle, charge 0) of the built-in table.
#[derive(Debug, Clone, Copy)]
pub struct IonRow {
    pub name: &'static str,
    pub charge: i32,
    /// Limiting equivalent conductivity at 25 °C, S·cm²/mol per unit charge (0 for a neutral
    /// particle, which never enters a junction potential).
    pub conductivity: f64,
    /// Where the conductivity comes from.
    pub source: &'static str,
}

const CRC: &str =
    "CRC Handbook of Chemistry and Physics, Ionic conductivity and diffusion at infinite dilution";
const ESTIMATE: &str = "estimate, from memory (large organic ion, about a third to a half of K+)";
const NEUTRAL: &str = "neutral particle: counts for osmolarity only";

/// The ions of solutions.md's table (CRC values), the large ions labs use (estimates), and the
/// neutral particles of solutes and buffers.
pub static IONS: &[IonRow] = &[
    IonRow {
        name: "H+",
        charge: 1,
        conductivity: 349.65,
        source: CRC,
    },
    IonRow {
        name: "Li+",
        charge: 1,
        conductivity: 38.66,
        source: CRC,
    },
    IonRow {
        name: "Na+",
        charge: 1,
        conductivity: 50.08,
        source: CRC,
    },
    IonRow {
        name: "K+",
        charge: 1,
        conductivity: 73.48,
        source: CRC,
    },
    IonRow {
        name: "Rb+",
        charge: 1,
        conductivity: 77.8,
        source: CRC,
    },
    IonRow {
        name: "Cs+",
        charge: 1,
        conductivity: 77.2,
        source: CRC,
    },
    IonRow {
        name: "NH4+",
        charge: 1,
        conductivity: 73.5,
        source: CRC,
    },
    IonRow {
        name: "Mg2+",
        charge: 2,
        conductivity: 53.0,
        source: CRC,
    },
    IonRow {
        name: "Ca2+",
        charge: 2,
        conductivity: 59.47,
        source: CRC,
    },
    IonRow {
        name: "Ba2+",
        charge: 2,
        conductivity: 63.6,
        source: CRC,
    },
    IonRow {
        name: "TMA+",
        charge: 1,
        conductivity: 44.9,
        source: CRC,
    },
    IonRow {
        name: "TEA+",
        charge: 1,
        conductivity: 32.6,
        source: CRC,
    },
    IonRow {
        name: "Cl-",
        charge: -1,
        conductivity: 76.31,
        source: CRC,
    },
    IonRow {
        name: "Br-",
        charge: -1,
        conductivity: 78.1,
        source: CRC,
    },
    IonRow {
        name: "I-",
        charge: -1,
        conductivity: 76.8,
        source: CRC,
    },
    IonRow {
        name: "F-",
        charge: -1,
        conductivity: 55.4,
        source: CRC,
    },
    IonRow {
        name: "NO3-",
        charge: -1,
        conductivity: 71.42,
        source: CRC,
    },
    IonRow {
        name: "HCO3-",
        charge: -1,
        conductivity: 44.5,
        source: CRC,
    },
    IonRow {
        name: "acetate-",
        charge: -1,
        conductivity: 40.9,
        source: CRC,
    },
    IonRow {
        name: "SO4(2-)",
        charge: -2,
        conductivity: 80.0,
        source: CRC,
    },
    IonRow {
        name: "OH-",
        charge: -1,
        conductivity: 198.0,
        source: CRC,
    },
    IonRow {
        name: "gluconate-",
        charge: -1,
        conductivity: 24.9,
        source: ESTIMATE,
    },
    IonRow {
        name: "methanesulfonate-",
        charge: -1,
        conductivity: 38.0,
        source: ESTIMATE,
    },
    IonRow {
        name: "NMDG+",
        charge: 1,
        conductivity: 24.0,
        source: ESTIMATE,
    },
    IonRow {
        name: "choline+",
        charge: 1,
        conductivity: 37.0,
        source: ESTIMATE,
    },
    IonRow {
        name: "HEPES-",
        charge: -1,
        conductivity: 22.0,
        source: "solutions.md, from memory",
    },
    IonRow {
        name: "HEPES",
        charge: 0,
        conductivity: 0.0,
        source: NEUTRAL,
    },
    IonRow {
        name: "glucose",
        charge: 0,
        conductivity: 0.0,
        source: NEUTRAL,
    },
    IonRow {
        name: "sucrose",
        charge: 0,
        conductivity: 0.0,
        source: NEUTRAL,
    },
    IonRow {
        name: "mannitol",
        charge: 0,
        conductivity: 0.0,
        source: NEUTRAL,
    },
];

/// What a compound does in a recipe.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Role {
    /// Dissociates fully into its ions (a salt), or is one neutral particle (a solute).
    Plain,
    /// A weak acid: at pH it gives `f = 1/(1 + 10^(pka − pH))` of `anion` and `1 − f` of
    /// `neutral` (Henderson–Hasselbalch); without a pH, all of it is neutral.
    Buffer {
        pka: f64,
        anion: &'static str,
        neutral: &'static str,
    },
    /// Gives its cation when titrating (its OH- is taken up by the buffer's protons).
    StrongBase,
    /// Gives its anion when titrating (its H+ is taken up by a basic buffer).
    StrongAcid,
}

/// One compound of the built-in table.
#[derive(Debug, Clone, Copy)]
pub struct CompoundRow {
    pub name: &'static str,
    /// The ions (or neutral particle) one formula unit gives, with their counts.
    pub ions: &'static [(&'static str, u32)],
    pub role: Role,
}

const fn plain(name: &'static str, ions: &'static [(&'static str, u32)]) -> CompoundRow {
    CompoundRow {
        name,
        ions,
        role: Role::Plain,
    }
}

/// Compounds under the trade's spelling.
pub static COMPOUNDS: &[CompoundRow] = &[
    plain("NaCl", &[("Na+", 1), ("Cl-", 1)]),
    plain("KCl", &[("K+", 1), ("Cl-", 1)]),
    plain("LiCl", &[("Li+", 1), ("Cl-", 1)]),
    plain("RbCl", &[("Rb+", 1), ("Cl-", 1)]),
    plain("CsCl", &[("Cs+", 1), ("Cl-", 1)]),
    plain("NH4Cl", &[("NH4+", 1), ("Cl-", 1)]),
    plain("CaCl2", &[("Ca2+", 1), ("Cl-", 2)]),
    plain("MgCl2", &[("Mg2+", 1), ("Cl-", 2)]),
    plain("BaCl2", &[("Ba2+", 1), ("Cl-", 2)]),
    plain("NaBr", &[("Na+", 1), ("Br-", 1)]),
    plain("KBr", &[("K+", 1), ("Br-", 1)]),
    plain("NaI", &[("Na+", 1), ("I-", 1)]),
    plain("KF", &[("K+", 1), ("F-", 1)]),
    plain("NaNO3", &[("Na+", 1), ("NO3-", 1)]),
    plain("KNO3", &[("K+", 1), ("NO3-", 1)]),
    plain("NaHCO3", &[("Na+", 1), ("HCO3-", 1)]),
    plain("Na-acetate", &[("Na+", 1), ("acetate-", 1)]),
    plain("K-acetate", &[("K+", 1), ("acetate-", 1)]),
    plain("Na2SO4", &[("Na+", 2), ("SO4(2-)", 1)]),
    plain("K2SO4", &[("K+", 2), ("SO4(2-)", 1)]),
    plain("MgSO4", &[("Mg2+", 1), ("SO4(2-)", 1)]),
    plain("Na-gluconate", &[("Na+", 1), ("gluconate-", 1)]),
    plain("K-gluconate", &[("K+", 1), ("gluconate-", 1)]),
    plain("Cs-gluconate", &[("Cs+", 1), ("gluconate-", 1)]),
    plain("K-methanesulfonate", &[("K+", 1), ("methanesulfonate-", 1)]),
    plain("Cs-methanesulfonate", &[("Cs+", 1), ("methanesulfonate-", 1)]),
    plain("NMDG-Cl", &[("NMDG+", 1), ("Cl-", 1)]),
    plain("choline-Cl", &[("choline+", 1), ("Cl-", 1)]),
    plain("TEA-Cl", &[("TEA+", 1), ("Cl-", 1)]),
    plain("TMA-Cl", &[("TMA+", 1), ("Cl-", 1)]),
    plain("glucose", &[("glucose", 1)]),
    plain("sucrose", &[("sucrose", 1)]),
    plain("mannitol", &[("mannitol", 1)]),
    CompoundRow {
        name: "HEPES",
        ions: &[("HEPES-", 1)],
        // pKa 7.5 at 25 °C (solutions.md, from memory).
        role: Role::Buffer {
            pka: 7.5,
            anion: "HEPES-",
            neutral: "HEPES",
        },
    },
    CompoundRow {
        name: "NaOH",
        ions: &[("Na+", 1), ("OH-", 1)],
        role: Role::StrongBase,
    },
    CompoundRow {
        name: "KOH",
        ions: &[("K+", 1), ("OH-", 1)],
        role: Role::StrongBase,
    },
    CompoundRow {
        name: "CsOH",
        ions: &[("Cs+", 1), ("OH-", 1)],
        role: Role::StrongBase,
    },
    CompoundRow {
        name: "HCl",
        ions: &[("H+", 1), ("Cl-", 1)],
        role: Role::StrongAcid,
    },
];
