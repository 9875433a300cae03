geokern::metric! {
    pub struct Polar {
        coords: [r, phi],
        g[r, r] = 1.0;
        g[phi, phi] = r.powi(2);
        ginv[r, r] = 1.0;
        ginv[phi, phi] = r.powi(-1);
    }
}

fn main() {}
