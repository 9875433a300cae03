//! From a kernel program to Cranelift IR: one straight-line function, one IR value per
//! program value.

use cranelift_codegen::ir::{
    types, AbiParam, FuncRef, InstBuilder, MemFlagsData, Signature, StackSlotData, StackSlotKind,
    UserFuncName, Value,
};
use cranelift_frontend::{FunctionBuilder, FunctionBuilderContext};
use cranelift_jit::JITModule;
use cranelift_module::{FuncId, Linkage, Module};
use geokern_symbolic::expr::{q_to_f64, Func};
use geokern_symbolic::program::{InputArray, Instr, KernelProgram};

use super::{calls, NativeError};

/// The order of the pointer arguments of a compiled kernel; the output pointer follows.
pub(super) const ARRAYS: [InputArray; 5] = [
    InputArray::X,
    InputArray::U,
    InputArray::P,
    InputArray::V,
    InputArray::Params,
];

/// Declares and defines `program` in `module` as function `name`:
/// `extern "C" fn(x, u, p, v, params: *const f64, out: *mut f64)`.
pub(super) fn define(
    module: &mut JITModule,
    name: &str,
    program: &KernelProgram,
) -> Result<FuncId, NativeError> {
    let pointer = module.target_config().pointer_type();
    let mut signature = module.make_signature();
    for _ in 0..=ARRAYS.len() {
        signature.params.push(AbiParam::new(pointer));
    }
    let id = module
        .declare_function(name, Linkage::Local, &signature)
        .map_err(codegen)?;
    let mut context = module.make_context();
    context.func.signature = signature;
    context.func.name = UserFuncName::user(0, id.as_u32());
    let mut builder_context = FunctionBuilderContext::new();
    {
        let mut b = FunctionBuilder::new(&mut context.func, &mut builder_context);
        let block = b.create_block();
        b.append_block_params_for_function_params(block);
        b.switch_to_block(block);
        b.seal_block(block);
        let arguments = b.block_params(block).to_vec();
        // The caller guarantees aligned, readable inputs and a writable output of the
        // program's size (see `NativeKernel::eval`), so no access can trap.
        let flags = MemFlagsData::trusted();
        let mut imported: Vec<(&'static str, FuncRef)> = Vec::new();
        let mut values: Vec<Value> = Vec::with_capacity(program.instrs.len());
        // A sine and a cosine of one argument come from one `sin_cos` call, made at the
        // first of the two; the second takes the value kept for it.
        let mut kept: Vec<Option<Value>> = vec![None; program.instrs.len()];
        let mut partner: Vec<Option<u32>> = vec![None; program.instrs.len()];
        for (s, c) in program.sin_cos_pairs() {
            partner[s as usize] = Some(c);
            partner[c as usize] = Some(s);
        }
        let pair =
            b.create_sized_stack_slot(StackSlotData::new(StackSlotKind::ExplicitSlot, 16, 3));
        for (i, ins) in program.instrs.iter().enumerate() {
            if let Some(value) = kept[i] {
                values.push(value);
                continue;
            }
            let at = |v: u32| values[v as usize];
            let value = match *ins {
                Instr::Call(f @ (Func::Sin | Func::Cos), x) if partner[i].is_some() => {
                    let callee = import(module, &mut b, &mut imported, calls::SIN_COS, 1)?;
                    let address = b.ins().stack_addr(pointer, pair, 0);
                    b.ins().call(callee, &[at(x), address]);
                    let sin = b.ins().stack_load(pointer, types::F64, pair, 0);
                    let cos = b.ins().stack_load(pointer, types::F64, pair, 8);
                    let (mine, theirs) = if f == Func::Sin {
                        (sin, cos)
                    } else {
                        (cos, sin)
                    };
                    if let Some(other) = partner[i] {
                        kept[other as usize] = Some(theirs);
                    }
                    mine
                }
                Instr::Input(array, k) => {
                    let slot = ARRAYS.iter().position(|a| *a == array).unwrap_or(0);
                    b.ins()
                        .load(types::F64, flags, arguments[slot], i32::from(k) * 8)
                }
                Instr::Const(ref q) => b.ins().f64const(q_to_f64(q)),
                Instr::Named(c) => b.ins().f64const(c.value()),
                Instr::Add(x, y) => b.ins().fadd(at(x), at(y)),
                Instr::Sub(x, y) => b.ins().fsub(at(x), at(y)),
                Instr::Mul(x, y) => b.ins().fmul(at(x), at(y)),
                Instr::Div(x, y) => b.ins().fdiv(at(x), at(y)),
                Instr::Neg(x) => b.ins().fneg(at(x)),
                Instr::Sqrt(x) => b.ins().sqrt(at(x)),
                Instr::Call(f, x) => {
                    let callee = import(module, &mut b, &mut imported, calls::name(f), 1)?;
                    let call = b.ins().call(callee, &[at(x)]);
                    b.inst_results(call)[0]
                }
                Instr::Powf(x, y) => {
                    let callee = import(module, &mut b, &mut imported, calls::POWF, 2)?;
                    let call = b.ins().call(callee, &[at(x), at(y)]);
                    b.inst_results(call)[0]
                }
            };
            values.push(value);
        }
        let out = arguments[ARRAYS.len()];
        for (k, &v) in program.outputs.iter().enumerate() {
            let offset = i32::try_from(k * 8).map_err(|_| NativeError::TooLarge)?;
            b.ins().store(flags, values[v as usize], out, offset);
        }
        b.ins().return_(&[]);
        b.finalize(module.target_config());
    }
    module.define_function(id, &mut context).map_err(codegen)?;
    module.clear_context(&mut context);
    Ok(id)
}

/// A reference, inside the function being built, to the runtime function `name`, declared
/// once per function: `fn(f64, ..) -> f64` with `arity` arguments, or for
/// [`calls::SIN_COS`] `fn(f64, *mut [f64; 2])`.
fn import(
    module: &mut JITModule,
    b: &mut FunctionBuilder<'_>,
    imported: &mut Vec<(&'static str, FuncRef)>,
    name: &'static str,
    arity: usize,
) -> Result<FuncRef, NativeError> {
    if let Some(&(_, r)) = imported.iter().find(|(n, _)| *n == name) {
        return Ok(r);
    }
    let mut signature = Signature::new(module.isa().default_call_conv());
    for _ in 0..arity {
        signature.params.push(AbiParam::new(types::F64));
    }
    if name == calls::SIN_COS {
        let pointer = module.target_config().pointer_type();
        signature.params.push(AbiParam::new(pointer));
    } else {
        signature.returns.push(AbiParam::new(types::F64));
    }
    let id = module
        .declare_function(name, Linkage::Import, &signature)
        .map_err(codegen)?;
    let r = module.declare_func_in_func(id, b.func);
    imported.push((name, r));
    Ok(r)
}

/// A code generator failure, kept as text (Cranelift's errors borrow nothing useful).
fn codegen(e: impl std::fmt::Display) -> NativeError {
    NativeError::Codegen(e.to_string())
}
