//! A small interpreter of naga's IR in f32, enough for the straight-line functions the WGSL
//! and GLSL backends emit, so the values of the units a real shader front end has parsed can
//! be checked without a GPU. Anything outside that subset fails the test that meets it.

use std::collections::HashMap;

use naga::{
    ArraySize, BinaryOperator, Expression, Function, Handle, Literal, LocalVariable, MathFunction,
    Module, Statement, TypeInner, UnaryOperator,
};

#[derive(Clone, Debug)]
enum Value {
    F(f32),
    I(i64),
    List(Vec<Value>),
    Ptr(Root, Vec<usize>),
}

#[derive(Clone, Copy, Debug)]
enum Root {
    Local(Handle<LocalVariable>),
    Arg(usize),
}

fn zero(module: &Module, ty: Handle<naga::Type>) -> Value {
    match &module.types[ty].inner {
        TypeInner::Scalar(_) => Value::F(0.0),
        TypeInner::Array {
            base,
            size: ArraySize::Constant(n),
            ..
        } => Value::List(vec![zero(module, *base); n.get() as usize]),
        TypeInner::Struct { members, .. } => {
            Value::List(members.iter().map(|m| zero(module, m.ty)).collect())
        }
        other => panic!("unsupported type {other:?}"),
    }
}

fn literal(l: &Literal) -> Value {
    match *l {
        Literal::F32(x) => Value::F(x),
        Literal::F64(x) | Literal::AbstractFloat(x) => Value::F(x as f32),
        Literal::I32(i) => Value::I(i.into()),
        Literal::U32(i) => Value::I(i.into()),
        Literal::I64(i) | Literal::AbstractInt(i) => Value::I(i),
        ref other => panic!("unsupported literal {other:?}"),
    }
}

fn global(module: &Module, h: Handle<Expression>) -> Value {
    match &module.global_expressions[h] {
        Expression::Literal(l) => literal(l),
        Expression::ZeroValue(ty) => zero(module, *ty),
        Expression::Compose { components, .. } => {
            Value::List(components.iter().map(|&c| global(module, c)).collect())
        }
        Expression::Constant(c) => global(module, module.constants[*c].init),
        other => panic!("unsupported global expression {other:?}"),
    }
}

fn element(v: Value, i: usize) -> Value {
    match v {
        Value::List(mut items) => items.swap_remove(i),
        Value::Ptr(root, mut path) => {
            path.push(i);
            Value::Ptr(root, path)
        }
        other => panic!("cannot index {other:?}"),
    }
}

fn float(v: &Value) -> f32 {
    match v {
        Value::F(x) => *x,
        other => panic!("expected a float, found {other:?}"),
    }
}

fn flatten(v: &Value, out: &mut Vec<f32>) {
    match v {
        Value::F(x) => out.push(*x),
        Value::List(items) => items.iter().for_each(|i| flatten(i, out)),
        other => panic!("cannot flatten {other:?}"),
    }
}

struct Frame<'a> {
    module: &'a Module,
    func: &'a Function,
    args: Vec<Value>,
    locals: HashMap<Handle<LocalVariable>, Value>,
    done: HashMap<Handle<Expression>, Value>,
}

impl Frame<'_> {
    fn slot(&mut self, root: Root, path: &[usize]) -> &mut Value {
        let mut v = match root {
            Root::Local(h) => self.locals.get_mut(&h).expect("local initialised"),
            Root::Arg(i) => &mut self.args[i],
        };
        for &i in path {
            v = match v {
                Value::List(items) => &mut items[i],
                other => panic!("cannot index {other:?}"),
            };
        }
        v
    }

    fn eval(&mut self, h: Handle<Expression>) -> Value {
        if let Some(v) = self.done.get(&h) {
            return v.clone();
        }
        let v = match &self.func.expressions[h] {
            Expression::Literal(l) => literal(l),
            Expression::Constant(c) => global(self.module, self.module.constants[*c].init),
            Expression::ZeroValue(ty) => zero(self.module, *ty),
            Expression::Compose { components, .. } => {
                Value::List(components.iter().map(|&c| self.eval(c)).collect())
            }
            Expression::AccessIndex { base, index } => element(self.eval(*base), *index as usize),
            Expression::Access { base, index } => {
                let Value::I(i) = self.eval(*index) else {
                    panic!("non-integer index")
                };
                element(self.eval(*base), i as usize)
            }
            Expression::FunctionArgument(i) => {
                let i = *i as usize;
                let ty = self.func.arguments[i].ty;
                match self.module.types[ty].inner {
                    TypeInner::Pointer { .. } => Value::Ptr(Root::Arg(i), Vec::new()),
                    _ => self.args[i].clone(),
                }
            }
            Expression::LocalVariable(l) => Value::Ptr(Root::Local(*l), Vec::new()),
            Expression::Load { pointer } => match self.eval(*pointer) {
                Value::Ptr(root, path) => self.slot(root, &path).clone(),
                other => panic!("load through {other:?}"),
            },
            Expression::Unary {
                op: UnaryOperator::Negate,
                expr,
            } => Value::F(-float(&self.eval(*expr))),
            Expression::Binary { op, left, right } => {
                let (a, b) = (float(&self.eval(*left)), float(&self.eval(*right)));
                Value::F(match op {
                    BinaryOperator::Add => a + b,
                    BinaryOperator::Subtract => a - b,
                    BinaryOperator::Multiply => a * b,
                    BinaryOperator::Divide => a / b,
                    other => panic!("unsupported operator {other:?}"),
                })
            }
            Expression::Math { fun, arg, arg1, .. } => {
                let a = float(&self.eval(*arg));
                let b = arg1.map(|b| float(&self.eval(b)));
                Value::F(match (fun, b) {
                    (MathFunction::Sqrt, None) => a.sqrt(),
                    (MathFunction::Sin, None) => a.sin(),
                    (MathFunction::Cos, None) => a.cos(),
                    (MathFunction::Tan, None) => a.tan(),
                    (MathFunction::Exp, None) => a.exp(),
                    (MathFunction::Log, None) => a.ln(),
                    (MathFunction::Sinh, None) => a.sinh(),
                    (MathFunction::Cosh, None) => a.cosh(),
                    (MathFunction::Tanh, None) => a.tanh(),
                    (MathFunction::Asin, None) => a.asin(),
                    (MathFunction::Acos, None) => a.acos(),
                    (MathFunction::Atan, None) => a.atan(),
                    (MathFunction::Pow, Some(b)) => a.powf(b),
                    other => panic!("unsupported function {other:?}"),
                })
            }
            other => panic!("unsupported expression {other:?}"),
        };
        self.done.insert(h, v.clone());
        v
    }

    /// Runs a block; the returned value, if it returns.
    fn run(&mut self, block: &naga::Block) -> Option<Option<Value>> {
        for statement in block.iter() {
            match statement {
                Statement::Emit(range) => {
                    for h in range.clone() {
                        self.eval(h);
                    }
                }
                Statement::Store { pointer, value } => {
                    let v = self.eval(*value);
                    match self.eval(*pointer) {
                        Value::Ptr(root, path) => *self.slot(root, &path) = v,
                        other => panic!("store through {other:?}"),
                    }
                }
                Statement::Block(inner) => {
                    if let Some(r) = self.run(inner) {
                        return Some(r);
                    }
                }
                Statement::Return { value } => return Some(value.map(|v| self.eval(v))),
                other => panic!("unsupported statement {other:?}"),
            }
        }
        None
    }
}

/// Calls function `name` of `module` with the value arguments `inputs`, in order; returns the
/// returned value followed by what it wrote to its pointer (`out`) arguments, flattened.
pub fn call(module: &Module, name: &str, inputs: &[Vec<f32>]) -> Vec<f32> {
    let (_, func) = module
        .functions
        .iter()
        .find(|(_, f)| f.name.as_deref() == Some(name))
        .unwrap_or_else(|| panic!("no function {name}"));
    let mut given = inputs.iter();
    let mut outputs = Vec::new();
    let args: Vec<Value> = func
        .arguments
        .iter()
        .enumerate()
        .map(|(i, a)| match module.types[a.ty].inner {
            TypeInner::Pointer { base, .. } => {
                outputs.push(i);
                zero(module, base)
            }
            _ => {
                let vals = given
                    .next()
                    .unwrap_or_else(|| panic!("{name}: too few inputs"));
                Value::List(vals.iter().map(|&x| Value::F(x)).collect())
            }
        })
        .collect();
    assert!(given.next().is_none(), "{name}: too many inputs");
    let mut frame = Frame {
        module,
        func,
        args,
        locals: HashMap::new(),
        done: HashMap::new(),
    };
    for (h, local) in func.local_variables.iter() {
        let v = match local.init {
            Some(init) => frame.eval(init),
            None => zero(module, local.ty),
        };
        frame.locals.insert(h, v);
    }
    let returned = frame.run(&func.body).flatten();
    let mut out = Vec::new();
    if let Some(v) = &returned {
        flatten(v, &mut out);
    }
    for i in outputs {
        flatten(&frame.args[i], &mut out);
    }
    out
}
