/* names.c - the rules for model names; see names.h. */
#include "names.h"
#include "ir.h"

#include <ctype.h>
#include <string.h>

/* C99 and C11 keywords, and C++ keywords because the emitted header is
 * also read by C++ compilers. */
static const char *const c_keywords[] = {
    "auto", "break", "case", "char", "const", "continue", "default", "do",
    "double", "else", "enum", "extern", "float", "for", "goto", "if",
    "inline", "int", "long", "register", "restrict", "return", "short",
    "signed", "sizeof", "static", "struct", "switch", "typedef", "union",
    "unsigned", "void", "volatile", "while", "_Bool", "_Complex",
    "_Imaginary", "_Alignas", "_Alignof", "_Atomic", "_Generic",
    "_Noreturn", "_Static_assert", "_Thread_local", NULL
};
static const char *const cxx_keywords[] = {
    "alignas", "alignof", "and", "and_eq", "asm", "bitand", "bitor", "bool",
    "catch", "char8_t", "char16_t", "char32_t", "class", "compl", "concept",
    "consteval", "constexpr", "constinit", "const_cast", "co_await",
    "co_return", "co_yield", "decltype", "delete", "dynamic_cast",
    "explicit", "export", "false", "friend", "mutable", "namespace", "new",
    "noexcept", "not", "not_eq", "nullptr", "operator", "or", "or_eq",
    "private", "protected", "public", "reinterpret_cast", "requires",
    "static_assert", "static_cast", "template", "this", "thread_local",
    "throw", "true", "try", "typeid", "typename", "using", "virtual",
    "wchar_t", "xor", "xor_eq", NULL
};
/* Macros of <math.h> (C99 7.12) and functions the emitted code calls that
 * are not model builtins: a value with one of these names would break
 * the generated source. */
static const char *const c_library[] = {
    "HUGE_VAL", "HUGE_VALF", "HUGE_VALL", "INFINITY", "NAN", "FP_INFINITE",
    "FP_NAN", "FP_NORMAL", "FP_SUBNORMAL", "FP_ZERO", "FP_FAST_FMA",
    "FP_FAST_FMAF", "FP_FAST_FMAL", "FP_ILOGB0", "FP_ILOGBNAN",
    "MATH_ERRNO", "MATH_ERREXCEPT", "math_errhandling", "fpclassify",
    "isfinite", "isinf", "isnan", "isnormal", "signbit", "isgreater",
    "isgreaterequal", "isless", "islessequal", "islessgreater",
    "isunordered", "fabs", "NULL", "errno", "assert", "size_t",
    NULL
};
static const char *const reductions[] = {"sum", "logsumexp", NULL};

/* (Every defined name is checked: the first letters spare most strcmp
 * calls.) */
static int listed(const char *const *list, const char *name)
{
    for (; *list; list++)
        if ((*list)[0] == name[0] && strcmp(*list, name) == 0)
            return 1;
    return 0;
}

int names_is_identifier(const char *name)
{
    if (!(isalpha((unsigned char)name[0]) || name[0] == '_'))
        return 0;
    for (const char *c = name; *c; c++)
        if (!(isalnum((unsigned char)*c) || *c == '_'))
            return 0;
    return 1;
}

/* Names the emitter gives its exported symbols for model MODEL. */
static int exported(const char *name, const char *model)
{
    static const char *const suffixes[] = {
        "_value", "_gradient", "_tangent", "_hessvec", "_hessian",
        "_adjoint", "_jacobian", "_param", "_input", "_output",
        "_param_flat", "_output_flat", "_work_count", NULL
    };
    static const char *const counts[] = {"_PARAM_COUNT", "_OUTPUT_COUNT",
                                         NULL};
    size_t n = strlen(model);
    if (strncmp(name, model, n) == 0 && listed(suffixes, name + n))
        return 1;
    /* MODEL_PARAM_COUNT and MODEL_OUTPUT_COUNT, the model in upper case */
    if (strlen(name) < n)
        return 0;
    for (size_t i = 0; i < n; i++)
        if (name[i] != toupper((unsigned char)model[i]))
            return 0;
    return listed(counts, name + n);
}

const char *names_reserved(const char *name, const char *model)
{
    if (listed(c_keywords, name))
        return "is a C keyword";
    if (listed(cxx_keywords, name))
        return "is a C++ keyword (the emitted header is also read by C++)";
    if (name[0] == '_' && (name[1] == '_' || isupper((unsigned char)name[1])))
        return "is reserved in C (names starting with '__' or '_' and a "
               "capital letter belong to the C implementation)";
    if (strncmp(name, DV_PREFIX, strlen(DV_PREFIX)) == 0 ||
        strncmp(name, "DVS_", 4) == 0)
        return "starts with '" DV_PREFIX "' or 'DVS_', prefixes dervish "
               "reserves for the names it invents in emitted code";
    if (ir_builtin(name) >= 0 || listed(reductions, name))
        return "is the name of a builtin function";
    if (listed(c_library, name))
        return "is a name from the C library that the emitted code relies on";
    for (int op = 0; op < IR_OP_COUNT; op++)
        if (ir_ops[op].kind == OPK_CALL &&
            ir_ops[op].c_spelling[0] == name[0] &&
            strcmp(ir_ops[op].c_spelling, name) == 0)
            return "is a C library function the emitted code calls";
    if (model && exported(name, model))
        return "is the name of a symbol the emitted code exports";
    return NULL;
}
