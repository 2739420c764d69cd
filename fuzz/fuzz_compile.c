/* fuzz_compile.c - libFuzzer target over the whole pipeline: model text
 * in, emitted C source and header out, in memory.  Any crash, sanitizer
 * report or leak is a bug; model errors are the normal outcome for most
 * inputs. */
#include "dervish.h"

#include <stddef.h>
#include <stdint.h>
#include <string.h>

/* Models of at most this many IR nodes are compiled again with every
 * derivative product (the tangent pass over the reverse sweep costs some
 * ten times the gradient on a huge statement, which would only slow the
 * fuzzer down), and with every function of more than 4 statements long:
 * written in parts of one statement, with repeat loops from 2 repeats. */
#define PRODUCTS_MAX_NODES 20000

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static void compile(const uint8_t *data, size_t size, int emit, int long_fns,
                    int *nodes, int *struct_output)
{
    DvCompilation c;
    DvOptions opt;
    memset(&opt, 0, sizeof opt);   /* no diagnostics */
    opt.emit = emit;
    if (long_fns) {
        opt.part_size = 1;
        opt.loop_repeats = 2;
    }
    if (dv_compile(&c, "fuzz.dvs", (const char *)data, size, &opt) == 0) {
        Buf src = {0}, hdr = {0};
        dv_emit(&c, "fuzz.c", "fuzz.h", &src, &hdr);
        buf_free(&src);
        buf_free(&hdr);
        *nodes = c.ir->nodes.len;
        *struct_output = c.ir->struct_output;
    }
    dv_free(&c);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    int nodes = -1, struct_output = 0;
    compile(data, size, 0, 0, &nodes, &struct_output);  /* the defaults */
    if (nodes >= 0 && nodes <= PRODUCTS_MAX_NODES)
        compile(data, size,
                struct_output ? DV_EMIT_STRUCT_DEFAULT | DV_EMIT_TANGENT
                              : DV_EMIT_DEFAULT | DV_EMIT_TANGENT |
                                    DV_EMIT_HESSIAN,
                1, &nodes, &struct_output);
    return 0;
}
