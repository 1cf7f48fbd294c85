use ratewell_service::dataset::*;
#[test]
fn smoke() {
    let d = demo_dataset();
    match &d { Ok(d) => println!("ok {} {} {}", d.id, d.version, d.content_hash), Err(e) => println!("{e}") }
    let d2 = load_folder(std::path::Path::new(concat!(env!("CARGO_MANIFEST_DIR"), "/data/demo-v2")));
    match &d2 { Ok(d) => println!("ok {} {} {}", d.id, d.version, d.content_hash), Err(e) => println!("{e}") }
}
