/* fuzz_compile.c - libFuzzer target over the whole pipeline: model text
 * in, emitted C source and header (every derivative product) out, in
 * memory.  Any crash, sanitizer report or leak is a bug; model errors are
 * the normal outcome for most inputs. */
#include "dervish.h"

#include <stddef.h>
#include <stdint.h>
#include <string.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    DvCompilation c;
    DvOptions opt;
    memset(&opt, 0, sizeof opt);   /* no diagnostics */
    opt.emit = DV_EMIT_DEFAULT | DV_EMIT_TANGENT | DV_EMIT_HESSIAN;
    if (dv_compile(&c, "fuzz.dvs", (const char *)data, size, &opt) == 0) {
        Buf src = {0}, hdr = {0};
        dv_emit(&c, "fuzz.c", "fuzz.h", &src, &hdr);
        buf_free(&src);
        buf_free(&hdr);
    }
    dv_free(&c);
    return 0;
}
