//! Every diagnostic the macro can give, one small case each (`tests/ui/*.rs` with the
//! expected compiler output beside it in `*.stderr`).

#[test]
fn ui() {
    let t = trybuild::TestCases::new();
    t.compile_fail("tests/ui/*.rs");
}
