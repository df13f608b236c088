"""Bilinear table lookups sixteen values at a time, as LLVM vector code.

LLVM does not vectorise the scalar lookup loops of ``suitmap.kernels.tables``
by itself: it cannot prove that the output does not overlap the tables, and
its cost model for this CPU family rates gathers as slow.  Measured on the
2-core AVX-512 machine of benchmarks/README.md, the loads are what a lookup
costs (about one element per cycle, scalar or gathered), so these
intrinsics cut the elements read per value: one 32-bit read per axis (the
lattice locator of ``tables_grid._lattice_grid``) and the four float32
coefficients of a cell as two 64-bit reads; 2.0 × the scalar loop with 2
threads, 1.5 × on one.

Each intrinsic handles ``LANES`` consecutive values from index ``i`` (the
caller runs the scalar loop of ``tables`` on the rest) and returns how many
came out +inf (cells marked for the exact kernel).  The arithmetic is the
scalar loop's, operation for operation in float32 (no fused multiply-adds),
so both give the same bits; ``tests/test_tables.py`` checks that.  On a CPU
without gathers LLVM splits them into scalar loads: same results, slower.
No I/O.

numba's on-disk cache keys each loop on the file that defines it: after
changing this module, clear the numba files (``*.nbi``, ``*.nbc``) in
``suitmap/kernels/__pycache__``.

References
----------
Press, W.H. et al. (2007) Numerical Recipes, 3rd ed., section 3.6 (bilinear
interpolation); LLVM Language Reference Manual, "llvm.masked.gather.*"
intrinsics.
"""

from __future__ import annotations

import math

from llvmlite import ir
from numba import types
from numba.extending import intrinsic

LANES = 16
LATTICE_BITS = 8                 # low bits of a locator entry: the bin's place in its cell

_F32, _F64 = ir.FloatType(), ir.DoubleType()
_I1, _I32, _I64 = ir.IntType(1), ir.IntType(32), ir.IntType(64)


def _vec(t: ir.Type) -> ir.VectorType:
    return ir.VectorType(t, LANES)


def _const(t: ir.Type, value) -> ir.Constant:
    return ir.Constant(_vec(t), [value] * LANES)


def _splat(builder: ir.IRBuilder, x: ir.Value) -> ir.Value:
    v = builder.insert_element(ir.Constant(_vec(x.type), None), x, ir.Constant(_I32, 0))
    return builder.shuffle_vector(v, v, ir.Constant(_vec(_I32), [0] * LANES))


def _gather(builder: ir.IRBuilder, base: ir.Value, index: ir.Value, ety: ir.Type) -> ir.Value:
    """base[index] for a vector of 32-bit indices (sign-extended, as the
    hardware gathers take them); base is a typed pointer to ety."""
    ptrs = builder.gep(base, [index], source_etype=ety)
    ptrs.type = _vec(base.type)             # llvmlite types a vector GEP as a scalar pointer
    tag = "f32" if ety == _F32 else ("f64" if ety == _F64 else f"i{ety.width}")
    name = f"llvm.masked.gather.v{LANES}{tag}.v{LANES}p0"
    fn = builder.module.globals.get(name)
    if fn is None:
        fn = ir.Function(builder.module, ir.FunctionType(
            _vec(ety), [_vec(base.type), _I32, _vec(_I1), _vec(ety)]), name)
    align = ir.Constant(_I32, ety.width // 8 if isinstance(ety, ir.IntType) else (
        8 if ety == _F64 else 4))
    return builder.call(fn, [ptrs, align, _const(_I1, 1), ir.Constant(_vec(ety), None)])


def _load(builder: ir.IRBuilder, data: ir.Value, i: ir.Value) -> ir.Value:
    """LANES values from data[i], as float32 (float64 input is rounded)."""
    p = builder.bitcast(builder.gep(data, [i]), _vec(data.type.pointee).as_pointer())
    single = data.type.pointee == _F32
    v = builder.load(p, align=4 if single else 8)
    return v if single else builder.fptrunc(v, _vec(_F32))


class _Axis:
    """The lattice axis ax = (t0 - dj, t1 + dj, 1/dj) as splatted constants."""

    def __init__(self, builder: ir.IRBuilder, ax: ir.Value) -> None:
        self.b = builder
        self.lo, self.hi, self.inv = (
            _splat(builder, builder.load(builder.gep(ax, [ir.Constant(_I64, k)])))
            for k in range(3))

    def cell(self, t: ir.Value, loc: ir.Value) -> tuple[ir.Value, ir.Value]:
        """(fraction in lattice units, cell part of the offset) of t: the
        scalar ``tables._cell``."""
        b = self.b
        tc = b.select(b.fcmp_ordered(">", t, self.lo), t, self.lo)   # NaN -> the border
        tc = b.select(b.fcmp_ordered("<", tc, self.hi), tc, self.hi)
        u = b.fmul(b.fsub(tc, self.lo), self.inv)
        j = b.fptosi(u, _vec(_I32))
        p = _gather(b, loc, j, _I32)
        first = b.sitofp(b.sub(j, b.and_(p, _const(_I32, (1 << LATTICE_BITS) - 1))),
                         _vec(_F32))
        return b.fsub(u, first), b.ashr(p, _const(_I32, LATTICE_BITS))


def _bilinear(builder: ir.IRBuilder, tab: ir.Value, cell: ir.Value, fx: ir.Value,
              fy: ir.Value) -> ir.Value:
    """c0 + fx c1 + fy (c2 + fx c3) of each lane's cell, its coefficients
    read as two 64-bit halves (c0, c1), (c2, c3)."""
    b = builder
    q = b.shl(cell, _const(_I32, 1))
    t64 = b.bitcast(tab, _I64.as_pointer())
    even = ir.Constant(_vec(_I32), list(range(0, 2 * LANES, 2)))
    odd = ir.Constant(_vec(_I32), list(range(1, 2 * LANES, 2)))
    c = []
    for half in (q, b.add(q, _const(_I32, 1))):
        pair = b.bitcast(_gather(b, t64, half, _I64), ir.VectorType(_F32, 2 * LANES))
        c += [b.shuffle_vector(pair, pair, even), b.shuffle_vector(pair, pair, odd)]
    return b.fadd(b.fadd(c[0], b.fmul(fx, c[1])), b.fmul(fy, b.fadd(c[2], b.fmul(fx, c[3]))))


def _finish(builder: ir.IRBuilder, v: ir.Value, inputs: list, out: ir.Value,
            i: ir.Value) -> ir.Value:
    """v + 0 (sum of inputs) (NaN in, NaN out), stored as float64 at
    out[i]; returns the count of +inf lanes (int64)."""
    b = builder
    s = inputs[0]
    for x in inputs[1:]:
        s = b.fadd(s, x)
    v = b.fadd(v, b.fmul(_const(_F32, 0.0), s))
    p = b.bitcast(b.gep(out, [i]), _vec(_F64).as_pointer())
    b.store(b.fpext(v, _vec(_F64)), p, align=8)
    inf = b.fcmp_ordered("==", v, _const(_F32, math.inf))
    return b.zext(b.ctpop(b.bitcast(inf, ir.IntType(LANES))), _I64)


def _data(context, builder, signature, args, skip: int) -> list:
    return [None if k == skip else context.make_array(t)(context, builder, v).data
            for k, (t, v) in enumerate(zip(signature.args, args))]


@intrinsic
def one_lanes(typingctx, a, b, out, i, ax, locr, locc, tab):
    """out[i:i+LANES] = the table at (a, b) (``tables._one_range``); returns
    the +inf count."""
    sig = types.int64(a, b, out, i, ax, locr, locc, tab)

    def codegen(context, builder, signature, args):
        pa, pb, po, _, pax, plr, plc, ptab = _data(context, builder, signature, args, 3)
        i = args[3]
        x, y = _load(builder, pa, i), _load(builder, pb, i)
        axis = _Axis(builder, pax)
        fx, kx = axis.cell(x, plr)
        fy, ky = axis.cell(y, plc)
        v = _bilinear(builder, ptab, builder.add(kx, ky), fx, fy)
        return _finish(builder, v, [x, y], po, i)
    return sig, codegen


@intrinsic
def halves_lanes(typingctx, a, b, c, out, i, ax, locr, locc, tab):
    """out[i:i+LANES] = the mean of the table at (a, b) and at (c, b)
    (``tables._halves_range``); returns the +inf count."""
    sig = types.int64(a, b, c, out, i, ax, locr, locc, tab)

    def codegen(context, builder, signature, args):
        pa, pb, pc, po, _, pax, plr, plc, ptab = _data(context, builder, signature, args, 4)
        i = args[4]
        x, y, w = _load(builder, pa, i), _load(builder, pb, i), _load(builder, pc, i)
        axis = _Axis(builder, pax)
        fx, kx = axis.cell(x, plr)
        fy, ky = axis.cell(y, plc)
        fw, kw = axis.cell(w, plr)
        v = builder.fmul(_const(_F32, 0.5), builder.fadd(
            _bilinear(builder, ptab, builder.add(kx, ky), fx, fy),
            _bilinear(builder, ptab, builder.add(kw, ky), fw, fy)))
        return _finish(builder, v, [x, y, w], po, i)
    return sig, codegen
