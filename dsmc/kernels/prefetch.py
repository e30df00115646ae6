"""A software prefetch hint for the kernels: ``prefetch(array, flat_index)``.

Kernels that visit cells one after another but touch each cell's particles in
random order (the collision kernel picks random pairs) wait on main memory for
every first touch of a cache line once the particle arrays no longer fit in the
cache: the hardware prefetchers follow sequential streams, not random picks
inside a cell.  Asking for the lines of a cell a few cells ahead, while the
current one is worked on, overlaps those waits with useful work.

The hint is LLVM's ``llvm.prefetch`` intrinsic (read access, highest temporal
locality, data cache), emitted through numba's ``@intrinsic`` extension API; it
compiles to the target's prefetch instruction, or to nothing where there is
none.  A prefetch never faults and never changes a result; the index must still
lie inside the array (the callers guarantee it).
"""

from __future__ import annotations

from llvmlite import ir
from numba import types
from numba.extending import intrinsic

LINE_BYTES = 64  # cache line of the x86-64 and aarch64 machines this runs on


@intrinsic
def prefetch(typingctx, array, index):
    """Hint that the element ``index`` (flat, C order) of a contiguous ``array`` will be read
    soon."""
    if not isinstance(array, types.Array) or not isinstance(index, types.Integer):
        return None
    sig = types.void(array, index)

    def codegen(context, builder, signature, args):
        arrty = signature.args[0]
        arr = context.make_array(arrty)(context, builder, args[0])
        idx = context.cast(builder, args[1], signature.args[1], types.intp)
        ptr = builder.gep(arr.data, [idx])
        i8p = ir.IntType(8).as_pointer()
        i32 = ir.IntType(32)
        fnty = ir.FunctionType(ir.VoidType(), [i8p, i32, i32, i32])
        # llvmlite names the overload for its LLVM version (newer LLVM upgrades older names)
        fn = builder.module.declare_intrinsic("llvm.prefetch", [i8p], fnty)
        # read (0), highest locality (3), data cache (1)
        builder.call(fn, [builder.bitcast(ptr, i8p), ir.Constant(i32, 0), ir.Constant(i32, 3),
                          ir.Constant(i32, 1)])
        return context.get_dummy_value()

    return sig, codegen
