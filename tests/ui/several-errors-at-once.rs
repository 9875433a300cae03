geokern::metric! {
    pub struct Many {
        coords: [t, x],
        g[t, t] = -q;
        g[x, x] = x.cbrt();
    }
}

fn main() {}
