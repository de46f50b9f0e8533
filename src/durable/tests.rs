use super::*;

fn dead_pid() -> u32 {
    let mut child = std::process::Command::new("true").spawn().unwrap();
    let pid = child.id();
    child.wait().unwrap();
    pid
}

fn names(dir: &Path) -> Vec<String> {
    let mut v: Vec<String> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    v.sort();
    v
}

#[test]
fn a_write_replaces_the_file_and_leaves_no_temporary_file() {
    let d = tempfile::tempdir().unwrap();
    let p = d.path().join("scores.npz");
    std::fs::write(&p, b"old").unwrap();
    write_bytes(&p, b"new").unwrap();
    assert_eq!(std::fs::read(&p).unwrap(), b"new");
    assert_eq!(names(d.path()), ["scores.npz"]);
}

#[test]
fn temporary_names_differ_per_call_and_name_their_writer() {
    let d = tempfile::tempdir().unwrap();
    let p = d.path().join("a.jsonl");
    let one = Staged::write(&p, |_| Ok(())).unwrap();
    let two = Staged::write(&p, |_| Ok(())).unwrap();
    assert_ne!(one.temp_path(), two.temp_path());
    let name = one.temp_path().file_name().unwrap().to_str().unwrap();
    assert_eq!(
        temp_owner(name),
        Some(TempOwner::Current {
            pid: std::process::id(),
            host: host_tag()
        })
    );
    drop(one);
    two.commit().unwrap();
    assert_eq!(names(d.path()), ["a.jsonl"]);
}

#[test]
fn a_failed_fill_removes_its_temporary_file_and_keeps_the_old_file() {
    let d = tempfile::tempdir().unwrap();
    let p = d.path().join("m.json");
    std::fs::write(&p, b"kept").unwrap();
    let r = write_file(&p, |w| {
        io::Write::write_all(w, b"half")?;
        Err(io::Error::other("disk full"))
    });
    assert!(r.is_err());
    assert_eq!(std::fs::read(&p).unwrap(), b"kept");
    assert_eq!(names(d.path()), ["m.json"]);
}

#[cfg(unix)]
#[test]
fn a_link_or_a_fifo_under_the_final_name_is_refused_and_left_alone() {
    let d = tempfile::tempdir().unwrap();
    let outside = d.path().join("outside.txt");
    std::fs::write(&outside, b"precious").unwrap();
    let link = d.path().join("link.jsonl");
    std::os::unix::fs::symlink(&outside, &link).unwrap();
    let e = write_bytes(&link, b"x").unwrap_err();
    assert!(e.to_string().contains("a link"), "{e}");
    assert_eq!(std::fs::read(&outside).unwrap(), b"precious");
    assert!(
        std::fs::symlink_metadata(&link)
            .unwrap()
            .file_type()
            .is_symlink()
    );
    let fifo = d.path().join("pipe.csv");
    let made = std::process::Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .unwrap();
    assert!(made.success());
    let e = write_bytes(&fifo, b"x").unwrap_err();
    assert!(e.to_string().contains("a fifo"), "{e}");
}

#[cfg(target_os = "linux")]
#[test]
fn stale_temporary_files_of_dead_processes_of_this_machine_are_removed() {
    let d = tempfile::tempdir().unwrap();
    let dead = dead_pid();
    let me = std::process::id();
    let host = host_tag();
    let stale = format!(".m.jsonl.partial-{dead}-0-{host}");
    let live = format!(".m.jsonl.partial-{me}-999999-{host}");
    let elsewhere = format!(".m.jsonl.partial-{dead}-0-0badc0de");
    let fresh_legacy = format!(".m.jsonl.partial-{dead}");
    let unrelated = format!("m.jsonl.partial-{dead}-0-{host}");
    for n in [&stale, &live, &elsewhere, &fresh_legacy, &unrelated] {
        std::fs::write(d.path().join(n), b"x").unwrap();
    }
    assert_eq!(remove_stale_temps(d.path()), 1);
    let mut kept = vec![live, elsewhere, fresh_legacy, unrelated];
    kept.sort();
    assert_eq!(names(d.path()), kept);
}

#[test]
fn temp_owner_reads_only_our_own_names() {
    assert_eq!(
        temp_owner(".x.npz.partial-12"),
        Some(TempOwner::Legacy { pid: 12 })
    );
    assert_eq!(
        temp_owner(".x.partial-3.npz.partial-12-4-0123abcd"),
        Some(TempOwner::Current {
            pid: 12,
            host: "0123abcd".into()
        })
    );
    for other in [
        "x.npz.partial-12",
        ".partial-12",
        ".x.partial-",
        ".x.partial-1-2",
        ".x.partial-a",
    ] {
        assert_eq!(temp_owner(other), None, "{other}");
    }
}

#[cfg(unix)]
#[test]
fn a_campaign_folder_that_is_a_link_or_a_file_is_refused() {
    let d = tempfile::tempdir().unwrap();
    let root = d.path().join("c");
    let outside = d.path().join("outside");
    std::fs::create_dir_all(&root).unwrap();
    std::fs::create_dir_all(&outside).unwrap();
    assert_eq!(
        real_dir(&root, Path::new("analysis/3")).unwrap(),
        root.join("analysis/3")
    );
    std::os::unix::fs::symlink(&outside, root.join("ledgers")).unwrap();
    let e = real_dir(&root, Path::new("ledgers")).unwrap_err();
    assert!(e.to_string().contains("a link"), "{e}");
    std::fs::write(root.join("exports"), b"").unwrap();
    assert!(real_dir(&root, Path::new("exports")).is_err());
    assert!(real_dir(&root, Path::new("../x")).is_err());
    assert_eq!(names(&outside), Vec::<String>::new());
}
