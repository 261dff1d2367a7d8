use super::*;

#[test]
fn replaces_the_file_and_leaves_no_temporary_behind() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("out.bin");
    write_atomic(&p, b"old").unwrap();
    write_atomic(&p, b"new contents").unwrap();
    assert_eq!(std::fs::read(&p).unwrap(), b"new contents");
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
}

#[test]
fn a_missing_folder_is_an_error_and_writes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("no-such-folder").join("out.bin");
    assert!(write_atomic(&p, b"x").is_err());
    assert!(!p.exists());
}

#[test]
fn a_batch_dropped_without_commit_leaves_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let (a, b) = (dir.path().join("a.txt"), dir.path().join("b.txt"));
    std::fs::write(&b, b"keep").unwrap();
    {
        let _batch = Batch::begin();
        write_atomic(&a, b"one").unwrap();
        write_atomic(&b, b"two").unwrap();
        assert!(!a.exists(), "staged, not yet renamed");
    }
    assert!(!a.exists());
    assert_eq!(std::fs::read(&b).unwrap(), b"keep");
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1, "no temporary left");
}

#[test]
fn a_committed_batch_renames_every_output() {
    let dir = tempfile::tempdir().unwrap();
    let (a, s) = (dir.path().join("a.txt"), dir.path().join("s.csv"));
    let batch = Batch::begin();
    write_atomic(&a, b"one").unwrap();
    let mut f = batch.stream(&s).unwrap();
    f.write_all(b"streamed").unwrap();
    let done = batch.commit().unwrap();
    assert_eq!(done.len(), 2);
    assert_eq!(std::fs::read(&a).unwrap(), b"one");
    assert_eq!(std::fs::read(&s).unwrap(), b"streamed");
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 2);
}

#[test]
fn outputs_equal_to_an_input_or_to_each_other_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let plant = dir.path().join("plant.toml");
    std::fs::write(&plant, b"x").unwrap();
    let same = dir.path().join(".").join("plant.toml");
    let e = check_outputs(&[&plant], &[("--csv", &same)]).unwrap_err();
    assert!(matches!(e, OutputError::IsInput { .. }), "{e}");
    let o = dir.path().join("o.bin");
    let o2 = dir.path().join("sub/../o.bin");
    std::fs::create_dir(dir.path().join("sub")).unwrap();
    let e = check_outputs(&[&plant], &[("--image", &o), ("--rust", &o2)]).unwrap_err();
    assert!(e.to_string().contains("--image") && e.to_string().contains("--rust"), "{e}");
    check_outputs(&[&plant], &[("--image", &o)]).unwrap();
}

#[cfg(unix)]
#[test]
fn links_devices_folders_and_read_only_files_are_refused() {
    use std::os::unix::fs::PermissionsExt;
    let dir = tempfile::tempdir().unwrap();
    let real = dir.path().join("real.txt");
    std::fs::write(&real, b"real").unwrap();
    let link = dir.path().join("link.txt");
    std::os::unix::fs::symlink(&real, &link).unwrap();
    assert!(matches!(check_outputs(&[], &[("--csv", &link)]), Err(OutputError::Symlink { .. })));
    assert!(write_atomic(&link, b"x").is_err());
    assert!(std::fs::symlink_metadata(&link).unwrap().file_type().is_symlink(), "the link is still a link");
    assert_eq!(std::fs::read(&real).unwrap(), b"real");
    let dev = Path::new("/dev/null");
    assert!(matches!(check_outputs(&[], &[("--csv", dev)]), Err(OutputError::NotRegular { kind: "a device", .. })));
    assert!(matches!(check_outputs(&[], &[("--csv", dir.path())]), Err(OutputError::NotRegular { .. })));
    let ro = dir.path().join("ro.txt");
    std::fs::write(&ro, b"ro").unwrap();
    std::fs::set_permissions(&ro, std::fs::Permissions::from_mode(0o444)).unwrap();
    assert!(matches!(check_outputs(&[], &[("--csv", &ro)]), Err(OutputError::ReadOnly { .. })));
    assert!(write_atomic(&ro, b"x").is_err());
    assert_eq!(std::fs::read(&ro).unwrap(), b"ro");
    assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 3, "no temporary left");
}
