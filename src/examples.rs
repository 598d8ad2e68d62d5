//! The bundled example scenarios, compiled into the program so that the window's examples
//! menu works wherever the binary is copied. The list must match `scenarios/` exactly; a test
//! below compares it with the directory, so it cannot go stale.

/// `(file name, file text)` of every `.ron` file in `scenarios/`, sorted by file name.
pub const EXAMPLES: &[(&str, &str)] = &[
    (
        "bi-ionic-reversal.ron",
        include_str!("../scenarios/bi-ionic-reversal.ron"),
    ),
    (
        "calcium-permeability-pulse.ron",
        include_str!("../scenarios/calcium-permeability-pulse.ron"),
    ),
    (
        "chloride-gluconate-silver-wire.ron",
        include_str!("../scenarios/chloride-gluconate-silver-wire.ron"),
    ),
    (
        "chloride-substitution.ron",
        include_str!("../scenarios/chloride-substitution.ron"),
    ),
    (
        "current-injection-rheobase.ron",
        include_str!("../scenarios/current-injection-rheobase.ron"),
    ),
    (
        "delayed-potassium-activation-family.ron",
        include_str!("../scenarios/delayed-potassium-activation-family.ron"),
    ),
    (
        "donnan-equilibrium.ron",
        include_str!("../scenarios/donnan-equilibrium.ron"),
    ),
    (
        "excitable-cell-pulse-train.ron",
        include_str!("../scenarios/excitable-cell-pulse-train.ron"),
    ),
    (
        "gluconate-pipette-junction.ron",
        include_str!("../scenarios/gluconate-pipette-junction.ron"),
    ),
    (
        "hypo-osmotic-swelling.ron",
        include_str!("../scenarios/hypo-osmotic-swelling.ron"),
    ),
    (
        "nmdg-sodium-substitution.ron",
        include_str!("../scenarios/nmdg-sodium-substitution.ron"),
    ),
    (
        "potassium-blocker-fraction-blocked.ron",
        include_str!("../scenarios/potassium-blocker-fraction-blocked.ron"),
    ),
    (
        "potassium-blocker-washin.ron",
        include_str!("../scenarios/potassium-blocker-washin.ron"),
    ),
    (
        "pump-block-swelling.ron",
        include_str!("../scenarios/pump-block-swelling.ron"),
    ),
    (
        "raised-bath-potassium.ron",
        include_str!("../scenarios/raised-bath-potassium.ron"),
    ),
    (
        "resting-cell-normal-bath.ron",
        include_str!("../scenarios/resting-cell-normal-bath.ron"),
    ),
    (
        "sodium-pump-recovery.ron",
        include_str!("../scenarios/sodium-pump-recovery.ron"),
    ),
    (
        "sodium-substitution-steps.ron",
        include_str!("../scenarios/sodium-substitution-steps.ron"),
    ),
    (
        "sucrose-bath-shrinks-the-cell.ron",
        include_str!("../scenarios/sucrose-bath-shrinks-the-cell.ron"),
    ),
];

/// The text of the bundled example called `file_name`.
pub fn example_text(file_name: &str) -> Option<&'static str> {
    EXAMPLES
        .iter()
        .find(|(name, _)| *name == file_name)
        .map(|(_, text)| *text)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_list_matches_the_scenarios_directory() {
        let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("scenarios");
        let mut on_disk: Vec<String> = std::fs::read_dir(&dir)
            .expect("scenarios/ is readable")
            .filter_map(|e| e.ok())
            .map(|e| e.file_name().to_string_lossy().into_owned())
            .filter(|n| n.ends_with(".ron"))
            .collect();
        on_disk.sort();
        let listed: Vec<String> = EXAMPLES.iter().map(|(n, _)| n.to_string()).collect();
        assert_eq!(
            listed, on_disk,
            "update EXAMPLES in src/examples.rs to match scenarios/"
        );
    }

    #[test]
    fn every_example_reads_without_error() {
        for (name, text) in EXAMPLES {
            if let Err(e) = crate::scenario::from_str(text, name) {
                panic!("{e}");
            }
        }
        assert_eq!(example_text("no-such-file.ron"), None);
    }
}
