//! From a kernel program to Cranelift IR: one straight-line body, one IR value per program
//! value, either on one point (`f64` values) or on `W` points at once (two-lane `f64x2`
//! vectors, the body run in a loop over pairs of lanes).

use cranelift_codegen::ir::condcodes::IntCC;
use cranelift_codegen::ir::{
    types, AbiParam, FuncRef, InstBuilder, MemFlagsData, Signature, StackSlot, StackSlotData,
    StackSlotKind, Type, UserFuncName, Value,
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

/// Lanes in one vector value of the lane form.
pub(super) const VECTOR: usize = 2;

/// How values are laid out.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(super) enum Form {
    /// One point: element `k` of an array at `k`.
    Scalar,
    /// `W` points (`W` a multiple of [`VECTOR`]): element `k` of lane `l` at `k·W + l`.
    /// Parameters stay scalar, one per point set.
    Lanes(usize),
}

/// Declares and defines `program` in `module` as function `name`:
/// `extern "C" fn(x, u, p, v, params: *const f64, out: *mut f64)`, in the layout of `form`.
pub(super) fn define(
    module: &mut JITModule,
    name: &str,
    program: &KernelProgram,
    form: Form,
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
        let entry = b.create_block();
        b.append_block_params_for_function_params(entry);
        b.switch_to_block(entry);
        let arguments = b.block_params(entry).to_vec();
        let mut body = Body {
            module: &mut *module,
            form,
            pointer,
            imported: Vec::new(),
            pair: b.create_sized_stack_slot(StackSlotData::new(StackSlotKind::ExplicitSlot, 16, 3)),
        };
        // Constants and parameters do not depend on the point: they are computed once, in
        // the entry block, ahead of the loop of the lane form.
        let mut values: Vec<Option<Value>> = vec![None; program.instrs.len()];
        for (i, ins) in program.instrs.iter().enumerate() {
            let scalar = match *ins {
                Instr::Const(ref q) => b.ins().f64const(q_to_f64(q)),
                Instr::Named(c) => b.ins().f64const(c.value()),
                Instr::Input(InputArray::Params, k) => {
                    let params = arguments[ARRAYS.len() - 1];
                    b.ins().load(
                        types::F64,
                        MemFlagsData::trusted(),
                        params,
                        i32::from(k) * 8,
                    )
                }
                _ => continue,
            };
            values[i] = Some(body.splat(&mut b, scalar));
        }
        // The lane form runs the body once per pair of lanes: `offset` is the pair's byte
        // offset, a parameter of the loop's block.
        let looping = match form {
            Form::Scalar => None,
            Form::Lanes(width) => {
                let zero = b.ins().iconst(pointer, 0);
                let looped = b.create_block();
                b.append_block_param(looped, pointer);
                b.ins().jump(looped, &[zero.into()]);
                b.switch_to_block(looped);
                Some((b.block_params(looped)[0], looped, width))
            }
        };
        b.seal_block(entry);
        let offset = looping.map(|(offset, _, _)| offset);
        body.lower(&mut b, program, &arguments, offset, &mut values)?;
        if let Some((offset, looped, width)) = looping {
            let exit = b.create_block();
            let step = b.ins().iadd_imm_s(offset, (VECTOR * 8) as i64);
            let more = b
                .ins()
                .icmp_imm_u(IntCC::UnsignedLessThan, step, (width * 8) as i64);
            b.ins().brif(more, looped, &[step.into()], exit, &[]);
            b.seal_block(looped);
            b.switch_to_block(exit);
            b.seal_block(exit);
        }
        b.ins().return_(&[]);
        b.finalize(module.target_config());
    }
    module.define_function(id, &mut context).map_err(codegen)?;
    module.clear_context(&mut context);
    Ok(id)
}

/// What lowering the body needs besides the builder.
struct Body<'m> {
    module: &'m mut JITModule,
    form: Form,
    pointer: Type,
    /// Runtime functions already declared in this function.
    imported: Vec<(&'static str, FuncRef)>,
    /// 16 bytes for `sin_cos` to write into.
    pair: StackSlot,
}

impl Body<'_> {
    /// The type of one value.
    fn value_type(&self) -> Type {
        match self.form {
            Form::Scalar => types::F64,
            Form::Lanes(_) => types::F64X2,
        }
    }

    /// A scalar as a value of this form (the same in every lane).
    fn splat(&self, b: &mut FunctionBuilder<'_>, scalar: Value) -> Value {
        match self.form {
            Form::Scalar => scalar,
            Form::Lanes(_) => b.ins().splat(types::F64X2, scalar),
        }
    }

    /// Where element `k` of an array sits, in bytes from the start of the current lanes.
    fn displacement(&self, k: usize) -> Result<i32, NativeError> {
        let lanes = match self.form {
            Form::Scalar => 1,
            Form::Lanes(width) => width,
        };
        i32::try_from(k * lanes * 8).map_err(|_| NativeError::TooLarge)
    }

    /// Memory flags: inputs and outputs are valid for the program's size (the caller checks),
    /// so no access traps; lane rows are 8-aligned, not 16, so vectors claim no alignment.
    fn flags(&self) -> MemFlagsData {
        match self.form {
            Form::Scalar => MemFlagsData::trusted(),
            Form::Lanes(_) => MemFlagsData::new().with_notrap(),
        }
    }

    /// Lowers every instruction not already in `values`, then stores the outputs; `offset`
    /// is the byte offset of the current pair of lanes (the lane form only).
    fn lower(
        &mut self,
        b: &mut FunctionBuilder<'_>,
        program: &KernelProgram,
        arguments: &[Value],
        offset: Option<Value>,
        values: &mut [Option<Value>],
    ) -> Result<(), NativeError> {
        let base = |b: &mut FunctionBuilder<'_>, slot: usize| match offset {
            Some(offset) => b.ins().iadd(arguments[slot], offset),
            None => arguments[slot],
        };
        let bases: Vec<Value> = (0..=ARRAYS.len()).map(|slot| base(b, slot)).collect();
        // A sine and a cosine of one argument come from one `sin_cos` call per lane, made at
        // the first of the two; the second takes the value kept for it.
        let mut partner: Vec<Option<u32>> = vec![None; program.instrs.len()];
        for (s, c) in program.sin_cos_pairs() {
            partner[s as usize] = Some(c);
            partner[c as usize] = Some(s);
        }
        for (i, ins) in program.instrs.iter().enumerate() {
            if values[i].is_some() {
                continue;
            }
            let at = |v: u32| {
                values[v as usize].ok_or(NativeError::Codegen(format!(
                    "value {v} used before it is defined"
                )))
            };
            let value = match *ins {
                Instr::Input(array, k) => {
                    let slot = ARRAYS.iter().position(|a| *a == array).unwrap_or(0);
                    let displacement = self.displacement(usize::from(k))?;
                    let ty = self.value_type();
                    b.ins().load(ty, self.flags(), bases[slot], displacement)
                }
                Instr::Add(x, y) => b.ins().fadd(at(x)?, at(y)?),
                Instr::Sub(x, y) => b.ins().fsub(at(x)?, at(y)?),
                Instr::Mul(x, y) => b.ins().fmul(at(x)?, at(y)?),
                Instr::Div(x, y) => b.ins().fdiv(at(x)?, at(y)?),
                Instr::Neg(x) => b.ins().fneg(at(x)?),
                Instr::Sqrt(x) => b.ins().sqrt(at(x)?),
                Instr::Call(f @ (Func::Sin | Func::Cos), x) if partner[i].is_some() => {
                    let (sin, cos) = self.sin_cos(b, at(x)?)?;
                    let (mine, theirs) = if f == Func::Sin {
                        (sin, cos)
                    } else {
                        (cos, sin)
                    };
                    if let Some(other) = partner[i] {
                        values[other as usize] = Some(theirs);
                    }
                    mine
                }
                Instr::Call(f, x) => self.call(b, calls::name(f), &[at(x)?])?,
                Instr::Powf(x, y) => self.call(b, calls::POWF, &[at(x)?, at(y)?])?,
                // Constants and parameters were placed in the entry block.
                Instr::Const(_) | Instr::Named(_) => {
                    return Err(NativeError::Codegen("a constant was not placed".into()))
                }
            };
            values[i] = Some(value);
        }
        let out = bases[ARRAYS.len()];
        for (k, &v) in program.outputs.iter().enumerate() {
            let value = values[v as usize]
                .ok_or_else(|| NativeError::Codegen(format!("output {k} is undefined")))?;
            let displacement = self.displacement(k)?;
            b.ins().store(self.flags(), value, out, displacement);
        }
        Ok(())
    }

    /// `name(args..)` on every lane: a scalar call per lane, the results gathered back.
    fn call(
        &mut self,
        b: &mut FunctionBuilder<'_>,
        name: &'static str,
        args: &[Value],
    ) -> Result<Value, NativeError> {
        let callee = self.import(b, name, args.len())?;
        match self.form {
            Form::Scalar => {
                let call = b.ins().call(callee, args);
                Ok(b.inst_results(call)[0])
            }
            Form::Lanes(_) => {
                let mut lanes = Vec::with_capacity(VECTOR);
                for lane in 0..VECTOR as u8 {
                    let scalars: Vec<Value> =
                        args.iter().map(|&a| b.ins().extractlane(a, lane)).collect();
                    let call = b.ins().call(callee, &scalars);
                    lanes.push(b.inst_results(call)[0]);
                }
                Ok(self.gather(b, &lanes))
            }
        }
    }

    /// `(sin x, cos x)` on every lane, one `sin_cos` call per lane.
    fn sin_cos(
        &mut self,
        b: &mut FunctionBuilder<'_>,
        x: Value,
    ) -> Result<(Value, Value), NativeError> {
        let callee = self.import(b, calls::SIN_COS, 1)?;
        let lanes = match self.form {
            Form::Scalar => 1,
            Form::Lanes(_) => VECTOR,
        };
        let (mut sines, mut cosines) = (Vec::new(), Vec::new());
        for lane in 0..lanes as u8 {
            let scalar = match self.form {
                Form::Scalar => x,
                Form::Lanes(_) => b.ins().extractlane(x, lane),
            };
            let address = b.ins().stack_addr(self.pointer, self.pair, 0);
            b.ins().call(callee, &[scalar, address]);
            sines.push(b.ins().stack_load(self.pointer, types::F64, self.pair, 0));
            cosines.push(b.ins().stack_load(self.pointer, types::F64, self.pair, 8));
        }
        Ok((self.gather(b, &sines), self.gather(b, &cosines)))
    }

    /// One value of this form from its lanes' scalars.
    fn gather(&self, b: &mut FunctionBuilder<'_>, lanes: &[Value]) -> Value {
        match self.form {
            Form::Scalar => lanes[0],
            Form::Lanes(_) => {
                let mut v = b.ins().splat(types::F64X2, lanes[0]);
                for (lane, &s) in lanes.iter().enumerate().skip(1) {
                    v = b.ins().insertlane(v, s, lane as u8);
                }
                v
            }
        }
    }

    /// A reference, inside the function being built, to the runtime function `name`, declared
    /// once per function: `fn(f64, ..) -> f64` with `arity` arguments, or for
    /// [`calls::SIN_COS`] `fn(f64, *mut [f64; 2])`.
    fn import(
        &mut self,
        b: &mut FunctionBuilder<'_>,
        name: &'static str,
        arity: usize,
    ) -> Result<FuncRef, NativeError> {
        if let Some(&(_, r)) = self.imported.iter().find(|(n, _)| *n == name) {
            return Ok(r);
        }
        let mut signature = Signature::new(self.module.isa().default_call_conv());
        for _ in 0..arity {
            signature.params.push(AbiParam::new(types::F64));
        }
        if name == calls::SIN_COS {
            signature.params.push(AbiParam::new(self.pointer));
        } else {
            signature.returns.push(AbiParam::new(types::F64));
        }
        let id = self
            .module
            .declare_function(name, Linkage::Import, &signature)
            .map_err(codegen)?;
        let r = self.module.declare_func_in_func(id, b.func);
        self.imported.push((name, r));
        Ok(r)
    }
}

/// A code generator failure, kept as text (Cranelift's errors borrow nothing useful).
fn codegen(e: impl std::fmt::Display) -> NativeError {
    NativeError::Codegen(e.to_string())
}
