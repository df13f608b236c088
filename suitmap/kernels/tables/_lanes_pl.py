"""The Parton-Logan arc-table day sixteen values at a time (``_pl_arcs``).

The per-value pass of ``_pl_arcs.arcs_range`` (six locates, the Q and K
planes, the night table, two chords through the rate's primitive) as LLVM
vector code with gathers, as ``_lanes`` does for the (Tmin, Tmax) tables.
It reads the block arrays that the phase pass of ``arcs_range`` fills, so
every read stays inside the block whatever the number of values left, and
writes the block's output; ``arcs_range`` runs its scalar loop on the values
past the last multiple of ``LANES``.  The arithmetic is the scalar loop's,
operation for operation (float32 lookups, float64 chords and sum, no fused
multiply-adds), so both give the same bits (tests/test_lanes.py).  No I/O.

After changing this module, clear the numba files (``*.nbi``, ``*.nbc``) in
``suitmap/kernels/__pycache__``.

References
----------
Parton, W.J. & Logan, J.A. (1981) Agricultural Meteorology 23:205-216; LLVM
Language Reference Manual, "llvm.masked.gather.*" intrinsics.
"""

from __future__ import annotations

import math

from llvmlite import ir
from numba import types
from numba.extending import intrinsic

from suitmap.kernels.tables._lanes import _F32, _F64, _I32, _I64, LANES, _const, _gather, _splat, _vec

# rows of the block array filled by the phase pass of _pl_arcs.arcs_range
FIELDS = ("tmin", "tmax", "t_rise", "t_plane", "t_set", "t_end", "p0", "dphi", "scale", "bad",
          "nan", "daylength")
EPS = 1e-3           # °C: closer arc ends use the rate at one end, not the chord


def _fabs(b: ir.IRBuilder, v: ir.Value) -> ir.Value:
    """|v| of a float64 vector (llvm.fabs)."""
    name = f"llvm.fabs.v{LANES}f64"
    fn = b.module.globals.get(name) or ir.Function(
        b.module, ir.FunctionType(_vec(_F64), [_vec(_F64)]), name)
    return b.call(fn, [v])


class _Builder:
    """IR helpers over one IRBuilder."""

    def __init__(self, b: ir.IRBuilder) -> None:
        self.b = b
        self.even = ir.Constant(_vec(_I32), list(range(0, 2 * LANES, 2)))
        self.odd = ir.Constant(_vec(_I32), list(range(1, 2 * LANES, 2)))

    def pairs(self, base: ir.Value, qword: ir.Value) -> tuple[ir.Value, ir.Value]:
        """The two float32 of each lane's 64-bit element qword of base (float*)."""
        b = self.b
        v = b.bitcast(_gather(b, b.bitcast(base, _I64.as_pointer()), qword, _I64),
                      ir.VectorType(_F32, 2 * LANES))
        return b.shuffle_vector(v, v, self.even), b.shuffle_vector(v, v, self.odd)

    def locate(self, t, ax, kmap, ctw):
        """``_pl_arcs._locate``: (cell kk as i32, fraction, 1/width) of t."""
        b = self.b
        lo, hi, inv = ax
        tc = b.select(b.fcmp_ordered(">", t, lo), t, lo)
        tc = b.select(b.fcmp_ordered("<", tc, hi), tc, hi)
        j = b.fptoui(b.fmul(b.fsub(tc, lo), inv), _vec(_I32))
        k = _gather(b, kmap, j, _I32)
        tk, iw = self.pairs(ctw, k)
        return k, b.fmul(b.fsub(tc, tk), iw), iw

    def bilinear(self, tab, cell4, fx, fy):
        """``tables._bilinear`` at float index cell4 (a multiple of 4, i32)."""
        b = self.b
        q = b.lshr(cell4, _const(_I32, 1))
        c0, c1 = self.pairs(tab, q)
        c2, c3 = self.pairs(tab, b.add(q, _const(_I32, 1)))
        return b.fadd(b.fadd(c0, b.fmul(fx, c1)), b.fmul(fy, b.fadd(c2, b.fmul(fx, c3))))

    def plane(self, kr, fr, kc, fc, rows, tab, off):
        """``_pl_arcs._plane``: +inf left of the diagonal or beyond the band, 0
        before the first stored column."""
        b = self.b
        r = b.shl(kr, _const(_I32, 2))
        base, first, last = (_gather(b, rows, b.add(r, _const(_I32, m)), _I64)
                             for m in range(3))
        col = b.zext(kc, _vec(_I64))
        exact = b.or_(b.icmp_signed("<", col, b.zext(kr, _vec(_I64))),
                      b.icmp_signed(">", col, last))
        zero = b.icmp_signed("<", col, first)
        q = b.add(b.add(base, b.shl(col, _const(_I64, 2))), off)
        q = b.trunc(b.select(b.or_(exact, zero), _const(_I64, 0), q), _vec(_I32))
        v = self.bilinear(tab, q, fr, fc)
        v = b.select(zero, _const(_F32, 0.0), v)
        return b.select(exact, _const(_F32, math.inf), v)

    def mean_rate(self, ku, fu, u, iwu, kv, fv, v, ptab):
        """``_pl_arcs._mean_rate``: (P(v) − P(u))/(v − u), the rate at u when
        they are within EPS."""
        b = self.b
        f, g = b.fpext(fu, _vec(_F64)), b.fpext(fv, _vec(_F64))

        def coef(k, m):
            return _gather(b, ptab, b.add(b.shl(k, _const(_I32, 2)), _const(_I32, m)), _F64)

        cu = [coef(ku, m) for m in range(4)]
        cv = [coef(kv, m) for m in range(4)]

        def cubic(c, x):
            return b.fadd(c[0], b.fmul(x, b.fadd(c[1], b.fmul(x, b.fadd(c[2], b.fmul(x, c[3]))))))

        pu, pv = cubic(cu, f), cubic(cv, g)
        slope = b.fmul(b.fadd(cu[1], b.fmul(f, b.fadd(
            b.fmul(_const(_F64, 2.0), cu[2]),
            b.fmul(b.fmul(_const(_F64, 3.0), f), cu[3])))), b.fpext(iwu, _vec(_F64)))
        d = b.fsub(b.fpext(v, _vec(_F64)), b.fpext(u, _vec(_F64)))
        near = b.fcmp_ordered("<", _fabs(b, d), _const(_F64, EPS))
        far = b.fdiv(b.fsub(pv, pu), b.select(near, _const(_F64, 1.0), d))
        return b.select(near, slope, far)


@intrinsic
def arcs_lanes(typingctx, blk, off, vout, i, ax, kmap, ctw, rows, tab, ptab, ntab, side):
    """vout[i:i+LANES] from the block arrays (``FIELDS`` rows of blk, plane
    offsets off) and the arc tables; returns 0."""
    sig = types.int64(blk, off, vout, i, ax, kmap, ctw, rows, tab, ptab, ntab, side)

    def codegen(context, builder, signature, args):
        data = [None if k in (3, 11) else context.make_array(t)(context, builder, v).data
                for k, (t, v) in enumerate(zip(signature.args, args))]
        pblk, poff, pout, _, pax, pkmap, pctw, prows, ptab_, pp, pntab, _ = data
        i, side = args[3], args[11]
        b = builder
        h = _Builder(b)
        block = context.make_array(signature.args[0])(context, b, args[0])
        stride = b.extract_value(block.strides, 0)           # bytes between fields
        row_len = b.sdiv(stride, ir.Constant(_I64, 4))

        def field(name: str) -> ir.Value:
            at = b.add(b.mul(ir.Constant(_I64, FIELDS.index(name)), row_len), i)
            p = b.bitcast(b.gep(pblk, [at]), _vec(_F32).as_pointer())
            return b.load(p, align=4)

        ax = [_splat(b, b.load(b.gep(pax, [ir.Constant(_I64, m)]))) for m in range(3)]
        x, y = field("tmin"), field("tmax")
        t1, t2, t3, t4 = (field(n) for n in ("t_rise", "t_plane", "t_set", "t_end"))
        kx, fx, iwx = h.locate(x, ax, pkmap, pctw)
        ky, fy, _ = h.locate(y, ax, pkmap, pctw)
        k1, f1, _ = h.locate(t1, ax, pkmap, pctw)
        k2, f2, iw2 = h.locate(t2, ax, pkmap, pctw)
        k3, f3, _ = h.locate(t3, ax, pkmap, pctw)
        k4, f4, _ = h.locate(t4, ax, pkmap, pctw)
        offv = b.load(b.bitcast(b.gep(poff, [i]), _vec(_I32).as_pointer()), align=4)
        q = h.plane(kx, fx, ky, fy, prows, ptab_, _const(_I64, 0))
        kv = h.plane(kx, fx, k2, f2, prows, ptab_, b.sext(offv, _vec(_I64)))
        side32 = _splat(b, b.trunc(side, _I32))
        nv = h.bilinear(pntab, b.shl(b.add(b.mul(k3, side32), k4), _const(_I32, 2)), f3, f4)
        m0 = h.mean_rate(kx, fx, x, iwx, k1, f1, t1, pp)
        m1 = h.mean_rate(k2, f2, t2, iw2, k3, f3, t3, pp)

        def d64(v):
            return b.fpext(v, _vec(_F64))

        arc = b.fsub(b.fsub(b.fmul(_const(_F64, 2.0), d64(q)), b.fmul(d64(field("p0")), m0)),
                     b.fadd(d64(kv), b.fmul(d64(field("dphi")), m1)))
        night = b.fmul(b.fsub(_const(_F64, 24.0), d64(field("daylength"))), d64(nv))
        v = b.fmul(b.fadd(b.fmul(d64(field("scale")), arc), night), _const(_F64, 1.0 / 24.0))
        ok = b.and_(b.fcmp_ordered("<", _fabs(b, v), _const(_F64, math.inf)),
                    b.fcmp_ordered("==", field("bad"), _const(_F32, 0.0)))
        v = b.fadd(b.select(ok, v, _const(_F64, math.inf)), d64(field("nan")))
        b.store(v, b.bitcast(b.gep(pout, [i]), _vec(_F64).as_pointer()), align=8)
        return ir.Constant(_I64, 0)
    return sig, codegen
