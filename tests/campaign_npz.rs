//! A campaign whose demonstrations are an `.npz` archive loads with the same values as the
//! table written (regression: the archive's members were parsed twice and never loaded).

mod campaign_kit;
use campaign_kit as common;

use countersteer::campaign::write::write_npz;

#[test]
fn npz_demonstrations_load_back_bit_for_bit() {
    let dir = tempfile::tempdir().unwrap();
    common::write_campaign(dir.path(), 5);
    let table = common::table(0.75, 2, 7, "npz-");
    std::fs::remove_file(dir.path().join("demonstrations/steps.jsonl")).unwrap();
    let f = std::fs::File::create(dir.path().join("demonstrations/d.npz")).unwrap();
    write_npz(&table, std::io::BufWriter::new(f)).unwrap();
    let c = common::load(dir.path());
    assert_eq!(c.demonstrations.states, table.states);
    assert_eq!(c.demonstrations.actions, table.actions);
    assert_eq!(c.demonstrations.t, table.t);
    assert_eq!(c.demonstrations.episodes.len(), 2);
    assert_eq!(c.demonstrations.episodes[1].name, "npz-01");
}
