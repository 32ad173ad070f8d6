//! Queue-file columns that supply what the barycentric correction needs.

use zsift::physics::bary;
use zsift::queue::Queue;
use zsift::spectrum::Metadata;

#[test]
fn queue_file_columns_supply_coordinates_time_and_site_per_target() {
    let dir = tempfile::tempdir().unwrap();
    let q = dir.path().join("queue.csv");
    std::fs::write(
        &q,
        "path,target,ra,dec,obs_time,time_ref,site_lon,site_lat,site_height\n\
         a.fits,A,150.0,-12.5,2024-04-01T02:00:00,mid,-61.375,27.8125,1875\n\
         b.fits,B,,,,,,,\n",
    )
    .unwrap();
    let queue = Queue::from_queue_file(&q).unwrap();
    let items = queue.items();
    let ov = items[0]
        .bary
        .clone()
        .expect("row A has barycentric columns");
    assert!(ov.replace);
    // The row alone is enough for a correction, for a file that says nothing.
    let v = bary::correction_kms(&Metadata::default(), &ov).unwrap();
    assert!(v.abs() < 31.0);
    assert_eq!(items[1].bary, None);
}

#[test]
fn a_bad_barycentric_cell_in_a_queue_file_names_the_line_and_column() {
    let dir = tempfile::tempdir().unwrap();
    let q = dir.path().join("queue.csv");
    std::fs::write(&q, "path,ra,dec\na.fits,12,\nb.fits,400,1\n").unwrap();
    let err = Queue::from_queue_file(&q).unwrap_err().to_string();
    assert!(err.contains("line 2") && err.contains("ra/dec"), "{err}");
}
