pub fn _x(){}
