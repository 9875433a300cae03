use geokern_symbolic::expr::{Func, Store, SymbolKind};
use geokern_symbolic::geometry::MetricModel;
use geokern_symbolic::kernels::build;
use geokern_symbolic::program::KernelKind;

#[test]
fn kerr_bl_counts() {
    let mut s = Store::new();
    let t = s.symbol("t", SymbolKind::Coordinate(0));
    let r = s.symbol("r", SymbolKind::Coordinate(1));
    let th = s.symbol("theta", SymbolKind::Coordinate(2));
    let _ph = s.symbol("phi", SymbolKind::Coordinate(3));
    let m = s.symbol("m", SymbolKind::Parameter(0));
    let a = s.symbol("a", SymbolKind::Parameter(1));
    let _ = t;
    let r2 = s.powi(r, 2);
    let c = s.call(Func::Cos, th);
    let ac = s.mul(&[a, c]);
    let ac2 = s.powi(ac, 2);
    let sigma = s.add(&[r2, ac2]);
    let two = s.int(2);
    let mr = s.mul(&[two, m, r]);
    let a2 = s.powi(a, 2);
    let neg_mr = s.neg(mr);
    let delta = s.add(&[r2, neg_mr, a2]);
    let mr_s = s.div(mr, sigma);
    let one = s.int(1);
    let f = s.sub(one, mr_s);
    let gtt = s.neg(f);
    let sn = s.call(Func::Sin, th);
    let sn2 = s.powi(sn, 2);
    let x = s.mul(&[mr, a, sn2]);
    let x = s.div(x, sigma);
    let gtp = s.neg(x);
    let grr = s.div(sigma, delta);
    let gthth = sigma;
    let asn = s.mul(&[a, sn]);
    let asn2 = s.powi(asn, 2);
    let y = s.mul(&[mr, asn2]);
    let y = s.div(y, sigma);
    let inner = s.add(&[r2, a2, y]);
    let gpp = s.mul(&[inner, sn2]);
    let z = s.int(0);
    let g = vec![
        vec![gtt, z, z, gtp],
        vec![z, grr, z, z],
        vec![z, z, gthth, z],
        vec![gtp, z, z, gpp],
    ];
    let mut model = MetricModel {
        name: "Kerr".into(),
        docs: vec![],
        coords: vec!["t".into(), "r".into(), "theta".into(), "phi".into()],
        params: vec!["m".into(), "a".into()],
        store: s,
        metric: g,
        declared_inverse: None,
        invariants: vec![],
        curvature: false,
    };
    let t0 = std::time::Instant::now();
    let ks = build(&mut model).unwrap();
    eprintln!("build {:?}, nodes {}", t0.elapsed(), model.store.len());
    for k in KernelKind::ALL {
        eprintln!("{:?}: {}", k, ks.program(k).op_counts());
    }
    eprintln!("cyclic {:?}", ks.cyclic);
    eprintln!("{}", ks.program(KernelKind::Accel));
}
