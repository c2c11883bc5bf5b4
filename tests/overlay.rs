//! A native overlay (`base = "...xml"`) on a DDI fixture: it lints clean and the merged
//! codebook holds the DDI variables plus the overlay's routing, additions and checks.

use std::path::Path;

#[test]
fn overlay_adds_routing_and_variables_to_the_ddi_base() {
    let path = Path::new(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/overlay/orchard-routing.toml"
    ));
    let loaded = concord::codebook::load(path).expect("the overlay and its base read");
    let codebook = &loaded.codebook;
    let mut diagnostics = loaded.problems.clone();
    diagnostics.extend(concord::codebook::lint::lint(codebook));
    assert!(diagnostics.is_empty(), "{diagnostics:#?}");

    let hours = codebook.variable("hours").unwrap();
    assert_eq!(hours.universe.as_ref().unwrap().text, "role in [1, 2]");
    // Missing codes come from the DDI file's invalrng / catgry missing="Y".
    assert!(hours.missing.iter().any(|m| m.kind.name() == "refused"));
    let role = codebook.variable("role").unwrap();
    assert_eq!(role.categories.len(), 3);
    assert_eq!(role.categories[0].label, "Pruning and grafting");
    let added = codebook.variable("signed_up").unwrap();
    assert_eq!(added.kind.name(), "date");
    assert_eq!(codebook.variables.last().unwrap().name, "signed_up");
    assert_eq!(codebook.checks.len(), 1);
    assert_eq!(codebook.dataset.id[0].name, "vol_id");
    // Diagnostics can point into either file.
    assert_eq!(codebook.sources.len(), 2);
}
