geokern::metric! {
    pub struct Odd {
        coords: [t, x],
        line_element = -dt.powi(2) + dx.powi(2) + dx;
    }
}

fn main() {}
