/* libFuzzer harness for the Lua binding itself: the input bytes choose
 * productions of a small grammar of API calls, which becomes a Lua script
 * run in a fresh Lua 5.4 state with the module loaded from csrc/bind and
 * ./lua.  Each statement runs under pcall, so an error ends only that
 * statement; errors are normal outcomes.  Crashes, sanitizer reports and
 * leaks are findings.  An instruction-count hook and a capped allocator
 * end slow or huge scripts.  SW_FUZZ_PRINT=1 prints each script. */
#include <locale.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <lauxlib.h>
#include <lua.h>
#include <lualib.h>

#include "fuzz_input.h"

int luaopen_segwise_core(lua_State *L);

#define SCRIPT_CAP (48 * 1024)
#define MAX_STMTS 40
#define MEM_CAP ((size_t)96 << 20)
#define INSN_STEP 1000
#define INSN_STEPS 4000 /* 4e6 VM instructions a script */

/* ---- the script being written ------------------------------------------ */

typedef struct out_buf {
  char s[SCRIPT_CAP];
  size_t n;
} out_buf;

static void emit(out_buf *o, const char *fmt, ...)
{
  va_list ap;
  int k;
  if (o->n >= SCRIPT_CAP - 1) return;
  va_start(ap, fmt);
  k = vsnprintf(o->s + o->n, SCRIPT_CAP - o->n, fmt, ap);
  va_end(ap);
  if (k < 0) return;
  o->n += (size_t)k;
  if (o->n > SCRIPT_CAP - 1) o->n = SCRIPT_CAP - 1;
}

static unsigned pick(fuzz_in *in, unsigned n) { return fuzz_u8(in) % n; }

/* A number as Lua source: mostly small and well formed, sometimes extreme. */
static void num(out_buf *o, fuzz_in *in)
{
  static const char *const extreme[] = {
    "0", "-0.0", "1e308", "-1e308", "(0/0)", "math.huge", "-math.huge", "2^53", "2^53+1",
    "math.mininteger", "math.maxinteger", "5e-324", "1e-300", "2^40", "-1", "0.5", "1e300",
    "2^31", "-2^63", "1e-12"};
  unsigned tag = fuzz_u8(in);
  if (tag >= 0xE0) {
    emit(o, "%s", extreme[tag % (sizeof extreme / sizeof extreme[0])]);
  } else if (tag >= 0xD8) {
    double d = fuzz_double(in);
    emit(o, "%.17g", d != d ? 0.0 : d); /* raw finite double (nan/inf spelt above) */
  } else {
    static const double scale[8] = {1, 0.1, 0.01, 1e-3, 1e-6, 10, 1e3, 1e-12};
    int v = (int)(int8_t)fuzz_u8(in);
    emit(o, "%.17g", v * scale[tag & 7]);
  }
}

/* A small count, sometimes a silly one. */
static void count(out_buf *o, fuzz_in *in)
{
  unsigned t = fuzz_u8(in);
  if (t < 200) emit(o, "%u", t % 9);
  else num(o, in);
}

static void str(out_buf *o, fuzz_in *in)
{
  static const char *const s[] = {
    "\"\"", "\"a\\0b\"", "string.rep('x', 70000)", "\"line\"", "\"hold\"", "\"error\"",
    "\"v\"", "\"i\"", "\"%g%s%d\"", "\"\\255\\254\"", "\"gnd\"", "\"0\"", "\"1.0\"", "\"A\"",
    "\"mA\"", "\"4k7\"", "\"\\r\\n\""};
  emit(o, "%s", s[pick(in, sizeof s / sizeof s[0])]);
}

/* Any value: a number, a string, a pool variable or a table. */
static void value(out_buf *o, fuzz_in *in)
{
  switch (pick(in, 10)) {
  case 0: case 1: case 2: num(o, in); break;
  case 3: str(o, in); break;
  case 4: emit(o, "C[%u]", pick(in, 4) + 1); break;
  case 5: emit(o, "M[%u]", pick(in, 4) + 1); break;
  case 6: emit(o, "N[%u]", pick(in, 3) + 1); break;
  case 7: emit(o, "A[%u]", pick(in, 2) + 1); break;
  case 8: emit(o, "{}"); break;
  default: emit(o, "%s", pick(in, 2) ? "true" : "nil"); break;
  }
}

static void num_list(out_buf *o, fuzz_in *in, int increasing)
{
  unsigned n = pick(in, 8), k;
  if (pick(in, 16) == 0) { emit(o, "A[%u]", pick(in, 2) + 1); return; }
  emit(o, "{");
  for (k = 0; k < n; k++) {
    if (increasing) emit(o, "%s%d", k ? "," : "", (int)(k * (1 + pick(in, 4))) - 2);
    else { if (k) emit(o, ","); num(o, in); }
  }
  emit(o, "}");
}

static const char *const elem_names[] = {"VIN", "RLOAD", "DIODE", "ISRC", "GAIN", "BIG"};
static const char *const node_names[] = {"\"gnd\"", "\"0\"", "\"a\"", "\"b\"", "\"c\"", "1",
                                         "1.0", "\"a\\0b\""};

static void elem(out_buf *o, fuzz_in *in)
{
  unsigned k = pick(in, 8);
  if (k < 6) emit(o, "\"%s\"", elem_names[k]);
  else value(o, in);
}

static void node(out_buf *o, fuzz_in *in)
{
  emit(o, "%s", node_names[pick(in, sizeof node_names / sizeof node_names[0])]);
}

/* ---- callbacks ----------------------------------------------------------- */

/* The body of a Lua curve: a plain law most of the time, sometimes one that
 * mutates the pools, frees, collects, errors or yields. */
static void fn_body(out_buf *o, fuzz_in *in)
{
  switch (pick(in, 14)) {
  case 0: emit(o, "return x * x"); break;
  case 1: emit(o, "return 1e-12 * (math.exp(x / 0.026) - 1)"); break;
  case 2: emit(o, "return 0/0"); break;
  case 3: emit(o, "error('callback failed')"); break;
  case 4: emit(o, "collectgarbage(); return x"); break;
  case 5: emit(o, "pcall(function() M[%u]:free() end); return x", pick(in, 4) + 1); break;
  case 6:
    emit(o, "pcall(function() N[%u]:resistor('RCB'..x, 'a', 'gnd', 10) end); return x",
         pick(in, 3) + 1);
    break;
  case 7: emit(o, "pcall(function() N[%u]:set('RLOAD', x) end); return x", pick(in, 3) + 1); break;
  case 8: emit(o, "M[%u] = nil; C[%u] = nil; collectgarbage(); return x", pick(in, 4) + 1,
               pick(in, 4) + 1); break;
  case 9: emit(o, "coroutine.yield(x); return x"); break;
  case 10:
    emit(o, "local mt = getmetatable(M[%u]); if type(mt) == 'table' and mt.__gc then "
            "pcall(mt.__gc, M[%u]) end; return x", pick(in, 4) + 1, pick(in, 4) + 1);
    break;
  case 11: emit(o, "pcall(function() N[%u]:solve() end); return x", pick(in, 3) + 1); break;
  case 12: emit(o, "return 'str'"); break;
  default: emit(o, "return -x"); break;
  }
}

static void callback(out_buf *o, fuzz_in *in)
{
  emit(o, "function(x) ");
  fn_body(o, in);
  emit(o, " end");
}

/* ---- statements ---------------------------------------------------------- */

static void st_curve(out_buf *o, fuzz_in *in)
{
  emit(o, "C[%u] = ", pick(in, 4) + 1);
  switch (pick(in, 5)) {
  case 0:
    emit(o, "sw.curve.diode{is = ");
    if (pick(in, 3)) emit(o, "1e-12"); else num(o, in);
    emit(o, ", n = "); if (pick(in, 3)) emit(o, "1.5"); else num(o, in);
    emit(o, ", rs = "); if (pick(in, 2)) emit(o, "0"); else num(o, in);
    emit(o, ", x = %s", pick(in, 2) ? "'v'" : "'i'");
    if (pick(in, 3) == 0) { emit(o, ", temp = "); num(o, in); }
    if (pick(in, 4) == 0) { emit(o, ", bogus = "); value(o, in); }
    emit(o, "}");
    break;
  case 1:
    emit(o, "sw.curve.power{k = "); num(o, in); emit(o, ", n = "); num(o, in);
    emit(o, ", lo = "); num(o, in); emit(o, ", hi = "); num(o, in); emit(o, "}");
    break;
  case 2:
    emit(o, "sw.curve.samples("); num_list(o, in, pick(in, 2)); emit(o, ", ");
    num_list(o, in, 0);
    emit(o, ", {sort = %s, duplicates = %s})", pick(in, 2) ? "true" : "false",
         pick(in, 2) ? "'mean'" : "'error'");
    break;
  case 3:
    emit(o, "sw.curve.fn(");
    callback(o, in);
    emit(o, ", {lo = "); num(o, in); emit(o, ", hi = "); num(o, in); emit(o, "})");
    break;
  default:
    emit(o, "sw.curve.fn(function(x) return x end, {lo = 0, hi = 1})");
    break;
  }
}

static void st_model(out_buf *o, fuzz_in *in)
{
  unsigned k, n;
  emit(o, "M[%u] = ", pick(in, 4) + 1);
  switch (pick(in, 3)) {
  case 0:
    emit(o, "sw.pwl{x = "); num_list(o, in, pick(in, 4) != 0);
    emit(o, ", y = "); num_list(o, in, 0);
    if (pick(in, 2)) { emit(o, ", extend = "); str(o, in); }
    emit(o, "}");
    break;
  case 1:
    n = pick(in, 5);
    emit(o, "sw.pwl.segments({");
    for (k = 0; k < n; k++) {
      emit(o, "%s{lo = %d, hi = ", k ? "," : "", (int)k);
      if (pick(in, 4)) emit(o, "%d", (int)k + 1); else num(o, in);
      emit(o, ", slope = "); num(o, in); emit(o, ", intercept = "); num(o, in); emit(o, "}");
    }
    emit(o, "}, {extend = "); str(o, in); emit(o, "})");
    break;
  default: {
    static const char *const opts[] = {"lo", "hi", "segments", "tol", "max_segments", "knots",
                                       "criterion", "error", "rel_floor", "continuous", "at",
                                       "through", "slope_first", "slope_last", "monotone",
                                       "grid", "offset", "segs", "tolerance"};
    static const char *const words[] = {"'uniform'", "'geometric'", "'curvature'", "'optimal'",
                                        "'minimax'", "'lsq'", "'interp'", "'tangent'", "'chord'",
                                        "'abs'", "'rel'", "{0.1, 0.2}", "{{0, 0}}", "{x = 0}"};
    emit(o, "sw.fit(C[%u], {", pick(in, 4) + 1);
    n = pick(in, 6);
    for (k = 0; k < n; k++) {
      unsigned w = pick(in, sizeof opts / sizeof opts[0]);
      emit(o, "%s%s = ", k ? ", " : "", opts[w]);
      if (w == 2 || w == 4) count(o, in);
      else if (w == 5 || w == 6 || w == 7 || w == 11 || pick(in, 3) == 0)
        emit(o, "%s", words[pick(in, sizeof words / sizeof words[0])]);
      else if (w == 9 || w == 14) emit(o, "%s", pick(in, 2) ? "true" : "false");
      else num(o, in);
    }
    emit(o, "})");
  }
  }
}

static void st_model_call(out_buf *o, fuzz_in *in)
{
  unsigned m = pick(in, 4) + 1;
  switch (pick(in, 16)) {
  case 0: emit(o, "M[%u](", m); num(o, in); emit(o, ")"); break;
  case 1: emit(o, "M[%u]:eval(", m); num_list(o, in, 0); emit(o, ")"); break;
  case 2: emit(o, "M[%u]:eval(A[1], A[%u])", m, pick(in, 2) + 1); break;
  case 3: emit(o, "M[%u]:slope(", m); num(o, in); emit(o, ")"); break;
  case 4: emit(o, "M[%u]:segment(", m); num(o, in); emit(o, ")"); break;
  case 5: emit(o, "M[%u]:seg(", m); num(o, in); emit(o, ")"); break;
  case 6: emit(o, "M[%u]:thevenin(", m); num(o, in); emit(o, ")"); break;
  case 7: emit(o, "M[%u]:norton(", m); num(o, in); emit(o, ")"); break;
  case 8: emit(o, "M[%u] = M[%u]:inverse()", pick(in, 4) + 1, m); break;
  case 9: emit(o, "M[%u]:canonical(); M[%u]:knots(); M[%u]:nseg(); local _ = #M[%u]", m, m, m,
               m); break;
  case 10:
    emit(o, "M[%u]:compare(C[%u], {lo = ", m, pick(in, 4) + 1); num(o, in);
    emit(o, ", hi = "); num(o, in); emit(o, ", n = "); count(o, in);
    if (pick(in, 2)) { emit(o, ", rel_floor = "); num(o, in); }
    emit(o, "})");
    break;
  case 11: emit(o, "M[%u]:fit_info(); tostring(M[%u]); M[%u]:is_continuous()", m, m, m); break;
  case 12: emit(o, "M[%u]:extend(", m); str(o, in); emit(o, ")"); break;
  case 13: emit(o, "M[%u] = M[%u]:copy()", pick(in, 4) + 1, m); break;
  case 14: emit(o, "M[%u]:free()", m); break;
  default:
    emit(o, "M[%u]:save(DIR .. '/m%u.model', {x_unit = ", m, pick(in, 3)); str(o, in);
    emit(o, "}); M[%u] = sw.pwl.load(DIR .. '/m%u.model')", pick(in, 4) + 1, pick(in, 3));
    break;
  }
}

static void st_curve_call(out_buf *o, fuzz_in *in)
{
  unsigned c = pick(in, 4) + 1;
  switch (pick(in, 7)) {
  case 0: emit(o, "C[%u](", c); num(o, in); emit(o, ")"); break;
  case 1: emit(o, "C[%u]:eval(", c); num_list(o, in, 0); emit(o, ")"); break;
  case 2: emit(o, "C[%u]:deriv(", c); num(o, in); emit(o, "); C[%u]:deriv2(", c); num(o, in);
    emit(o, ")"); break;
  case 3: emit(o, "C[%u]:domain(); C[%u]:kind(); C[%u]:params(); C[%u]:points()", c, c, c, c);
    break;
  case 4: emit(o, "C[%u]:free()", c); break;
  case 5: emit(o, "tostring(C[%u])", c); break;
  default: emit(o, "sw.thermal_voltage("); num(o, in); emit(o, ")"); break;
  }
}

static void st_build(out_buf *o, fuzz_in *in)
{
  unsigned n = pick(in, 3) + 1;
  switch (pick(in, 11)) {
  case 0: emit(o, "N[%u] = sw.network()", n); break;
  case 1: case 2:
    emit(o, "N[%u]:resistor(", n); elem(o, in); emit(o, ", "); node(o, in); emit(o, ", ");
    node(o, in); emit(o, ", "); num(o, in); emit(o, ")");
    break;
  case 3:
    emit(o, "N[%u]:vsource(", n); elem(o, in); emit(o, ", "); node(o, in); emit(o, ", ");
    node(o, in); emit(o, ", "); num(o, in);
    if (pick(in, 3) == 0) { emit(o, ", {pmax = "); num(o, in); emit(o, ", imax = 1}"); }
    emit(o, ")");
    break;
  case 4:
    emit(o, "N[%u]:isource(", n); elem(o, in); emit(o, ", "); node(o, in); emit(o, ", ");
    node(o, in); emit(o, ", "); num(o, in); emit(o, ")");
    break;
  case 5:
    emit(o, "N[%u]:%s(", n, pick(in, 2) ? "vcvs" : "vccs"); elem(o, in);
    emit(o, ", "); node(o, in); emit(o, ", "); node(o, in); emit(o, ", "); node(o, in);
    emit(o, ", "); node(o, in); emit(o, ", "); num(o, in); emit(o, ")");
    break;
  case 6:
    emit(o, "N[%u]:%s(", n, pick(in, 2) ? "ccvs" : "cccs"); elem(o, in);
    emit(o, ", "); node(o, in); emit(o, ", "); node(o, in); emit(o, ", "); elem(o, in);
    emit(o, ", "); num(o, in); emit(o, ")");
    break;
  case 7: case 8:
    emit(o, "N[%u]:element(", n); elem(o, in); emit(o, ", "); node(o, in); emit(o, ", ");
    node(o, in); emit(o, ", M[%u], {x = %s", pick(in, 4) + 1, pick(in, 2) ? "'v'" : "'i'");
    if (pick(in, 2)) emit(o, ", exact = C[%u]", pick(in, 4) + 1);
    if (pick(in, 4) == 0) { emit(o, ", pmax = "); num(o, in); }
    if (pick(in, 4) == 0) emit(o, ", active = true");
    if (pick(in, 6) == 0) { emit(o, ", wrong = "); value(o, in); }
    emit(o, "})");
    break;
  case 9:
    emit(o, "N[%u]:set(", n); elem(o, in); emit(o, ", "); num(o, in); emit(o, ")");
    break;
  default:
    /* a ladder, so sizes beyond the hand-written ones are reached */
    emit(o, "for k = 1, %u do N[%u]:resistor('RL'..k, 'l'..(k-1), 'l'..k, 100); "
            "N[%u]:element('DL'..k, 'l'..k, 'gnd', M[%u], {exact = C[%u]}) end; "
            "N[%u]:vsource('VL', 'l0', 'gnd', 2)",
         1 + pick(in, 60), n, n, pick(in, 4) + 1, pick(in, 4) + 1, n);
    break;
  }
}

static void out_list(out_buf *o, fuzz_in *in)
{
  static const char *const q[] = {"'i.DIODE'", "'v.a'", "'vd.DIODE'", "'p.RLOAD'",
                                  "'state.DIODE'", "'i.nope'", "'x.y'", "''", "'v.'"};
  unsigned n = pick(in, 4), k;
  emit(o, "{");
  for (k = 0; k < n; k++) emit(o, "%s%s", k ? "," : "", q[pick(in, sizeof q / sizeof q[0])]);
  emit(o, "}");
}

static void st_solve(out_buf *o, fuzz_in *in)
{
  static const char *const methods[] = {"'auto'", "'assumed'", "'enumerate'", "'lcp'", "'x'"};
  unsigned n = pick(in, 3) + 1;
  switch (pick(in, 9)) {
  case 0: case 1:
    emit(o, "OP[%u] = N[%u]:solve{method = %s, trace = %s", pick(in, 2) + 1, n,
         methods[pick(in, 5)], pick(in, 2) ? "true" : "nil");
    if (pick(in, 2)) emit(o, ", exact = true");
    if (pick(in, 3) == 0) { emit(o, ", start = {DIODE = "); num(o, in); emit(o, "}"); }
    if (pick(in, 3) == 0) { emit(o, ", max_states = "); num(o, in); }
    emit(o, "}");
    break;
  case 2: emit(o, "local l = N[%u]:solve_all(); OP[1] = l[1]", n); break;
  case 3:
    emit(o, "ROWS = N[%u]:sweep(", n); elem(o, in); emit(o, ", "); num_list(o, in, 0);
    if (pick(in, 2)) { emit(o, ", {out = "); out_list(o, in); emit(o, "}"); }
    emit(o, ")");
    break;
  case 4:
    /* the out list's metamethods run Lua code while the sweep reads it */
    emit(o, "local vals = sw.array{1, 2, 3}; ROWS = N[%u]:sweep('VIN', vals, {out = "
            "setmetatable({}, {__len = function() vals:free(); collectgarbage(); return 1 end, "
            "__index = function() return 'i.DIODE' end})})", n);
    break;
  case 5:
    emit(o, "ROWS = N[%u]:corners{", n); elem(o, in); emit(o, " == nil and 1 or nil, VIN = {");
    num(o, in); emit(o, ", "); num(o, in); emit(o, "}, RLOAD = {"); num(o, in); emit(o, "}}");
    break;
  case 6:
    emit(o, "ROWS = N[%u]:montecarlo({VIN = ", n); num(o, in);
    emit(o, ", RLOAD = {sd = "); num(o, in); emit(o, "}}, {runs = "); count(o, in);
    emit(o, ", seed = "); num(o, in);
    if (pick(in, 2)) { emit(o, ", out = "); out_list(o, in); }
    emit(o, "})");
    break;
  case 7: emit(o, "sw.compare_ops(OP[1], OP[2]); OP[1]:diff(OP[2])"); break;
  default:
    emit(o, "tostring(N[%u]); N[%u]:info(); N[%u]:segments(", n, n, n); elem(o, in);
    emit(o, ")");
    break;
  }
}

static void st_misc(out_buf *o, fuzz_in *in)
{
  unsigned a = pick(in, 2) + 1;
  switch (pick(in, 14)) {
  case 0: emit(o, "collectgarbage()"); break;
  case 1: emit(o, "A[%u] = sw.array(", a); if (pick(in, 2)) count(o, in); else num_list(o, in, 0);
    emit(o, ")"); break;
  case 2: emit(o, "A[%u][", a); num(o, in); emit(o, "] = "); num(o, in); break;
  case 3: emit(o, "A[%u] = A[%u]:slice(", a, pick(in, 2) + 1); num(o, in); emit(o, ", ");
    num(o, in); emit(o, ")"); break;
  case 4: emit(o, "A[%u]:free(); A[%u]:totable()", a, pick(in, 2) + 1); break;
  case 5: emit(o, "sw.si("); num(o, in); emit(o, ", "); str(o, in); emit(o, "); sw.parse_si(");
    str(o, in); emit(o, ")"); break;
  case 6:
    emit(o, "sw.report.table(ROWS, {%s}, {format = %s})",
         pick(in, 2) ? "'v.a', 'i.DIODE'" : "",
         pick(in, 3) == 0 ? "'csv'" : pick(in, 2) ? "'markdown'" : "'text'");
    break;
  case 7: {
    /* a method of one type called on another object or on a stranger */
    static const char *const pools[] = {"M", "C", "N", "A"};
    static const char *const meths[] = {"eval", "free", "solve", "knots", "compare", "slice",
                                        "__gc", "__index", "__call", "__len", "__tostring"};
    emit(o, "local mt = getmetatable(%s[%u]); if type(mt) == 'table' then local f = "
            "mt.%s or (type(mt.__index) == 'table' and mt.__index.%s); if f then f(",
         pools[pick(in, 4)], pick(in, 2) + 1, meths[pick(in, 11)], meths[pick(in, 11)]);
    value(o, in); emit(o, ", "); value(o, in); emit(o, ") end end");
    break;
  }
  case 8:
    emit(o, "local mt = getmetatable(M[%u]); if type(mt) == 'table' then "
            "setmetatable(M[%u], nil) end", pick(in, 4) + 1, pick(in, 4) + 1);
    break;
  case 9: emit(o, "local co = coroutine.wrap(function() M[%u]:compare(sw.curve.fn(", pick(in, 4) + 1);
    callback(o, in); emit(o, ", {lo = 0, hi = 1})) end); co(); co()"); break;
  case 10: emit(o, "%s[%u] = nil; collectgarbage('step', %u)", pick(in, 2) ? "M" : "C",
                pick(in, 4) + 1, pick(in, 100)); break;
  case 11: {
    /* the raw core object behind a network, called with odd arguments */
    static const char *const raw[] = {"solve", "sweep", "sweep_arrays", "montecarlo",
                                      "montecarlo_arrays", "set", "add", "device", "info"};
    emit(o, "local c = N[%u]._c; c:%s(", pick(in, 3) + 1, raw[pick(in, 9)]);
    value(o, in); emit(o, ", "); value(o, in); emit(o, ", "); value(o, in); emit(o, ", ");
    value(o, in); emit(o, ")");
    break;
  }
  case 12: emit(o, "N[%u]:free()", pick(in, 3) + 1); break;
  default: emit(o, "sw.plot.term{series = {{x = {0, 1}, y = {0, "); num(o, in);
    emit(o, "}}}, width = "); count(o, in); emit(o, "}"); break;
  }
}

static void statement(out_buf *o, fuzz_in *in)
{
  emit(o, "pcall(function() ");
  switch (pick(in, 8)) {
  case 0: st_curve(o, in); break;
  case 1: st_model(o, in); break;
  case 2: st_model_call(o, in); break;
  case 3: st_curve_call(o, in); break;
  case 4: case 5: st_build(o, in); break;
  case 6: st_solve(o, in); break;
  default: st_misc(o, in); break;
  }
  emit(o, " end)\n");
}

static const char prelude[] =
  "local sw = require 'segwise'\n"
  "print, io.write = function() end, function() end\n"
  "C, M, N, A, OP, ROWS = {}, {}, {}, {}, {}, {}\n"
  "pcall(function()\n"
  "  C[1] = sw.curve.diode{is = 1e-12, n = 1.5}\n"
  "  C[2] = sw.curve.fn(function(x) return x * x * x end, {lo = -1, hi = 1})\n"
  "  M[1] = sw.pwl{x = {0, 0.5, 0.6, 0.7, 0.8}, y = {0, 1e-6, 1e-4, 3e-3, 3e-2}}\n"
  "  M[2] = sw.pwl{x = {-1, 0, 1}, y = {-1, 0, 2}}\n"
  "  A[1] = sw.array{0.1, 0.2, 0.3}; A[2] = sw.array(3)\n"
  "  for k = 1, 3 do N[k] = sw.network() end\n"
  "  N[1]:vsource('VIN', 'a', 'gnd', 5); N[1]:resistor('RLOAD', 'a', 'b', 100)\n"
  "  N[1]:element('DIODE', 'b', 'gnd', M[1], {exact = C[1]})\n"
  "end)\n";

static void build_script(out_buf *o, fuzz_in *in)
{
  unsigned n = 1 + pick(in, MAX_STMTS), k;
  o->n = 0;
  emit(o, "%s", prelude);
  for (k = 0; k < n && in->n > 0; k++) statement(o, in);
}

/* ---- running it ---------------------------------------------------------- */

typedef struct mem_cap {
  size_t used;
} mem_cap;

static void *capped_alloc(void *ud, void *ptr, size_t osize, size_t nsize)
{
  mem_cap *m = ud;
  size_t old = ptr ? osize : 0;
  if (nsize == 0) {
    free(ptr);
    m->used -= old;
    return NULL;
  }
  if (nsize > old && m->used - old + nsize > MEM_CAP) return NULL;
  ptr = realloc(ptr, nsize);
  if (ptr) m->used = m->used - old + nsize;
  return ptr;
}

static int insn_steps;

static void insn_hook(lua_State *L, lua_Debug *ar)
{
  (void)ar;
  if (++insn_steps > INSN_STEPS) luaL_error(L, "fuzz: instruction budget spent");
}

static char tmp_dir[64];

static void clean_tmp(void)
{
  char p[96];
  int k;
  for (k = 0; k < 3; k++) {
    snprintf(p, sizeof p, "%s/m%d.model", tmp_dir, k);
    unlink(p);
  }
  rmdir(tmp_dir);
}

static void run_script(const char *script, size_t len)
{
  mem_cap cap = {0};
  lua_State *L = lua_newstate(capped_alloc, &cap);
  if (!L) return;
  luaL_openlibs(L);
  luaL_getsubtable(L, LUA_REGISTRYINDEX, LUA_PRELOAD_TABLE);
  lua_pushcfunction(L, luaopen_segwise_core);
  lua_setfield(L, -2, "segwise.core");
  lua_pop(L, 1);
  lua_getglobal(L, "package");
  lua_pushliteral(L, "./lua/?.lua;./lua/?/init.lua");
  lua_setfield(L, -2, "path");
  lua_pushliteral(L, "");
  lua_setfield(L, -2, "cpath");
  lua_pop(L, 1);
  lua_pushstring(L, tmp_dir);
  lua_setglobal(L, "DIR");
  insn_steps = 0;
  lua_sethook(L, insn_hook, LUA_MASKCOUNT, INSN_STEP);
  if (luaL_loadbuffer(L, script, len, "=fuzz") == LUA_OK) {
    if (lua_pcall(L, 0, 0, 0) != LUA_OK && getenv("SW_FUZZ_PRINT"))
      fprintf(stderr, "script error: %s\n", lua_tostring(L, -1));
  } else if (getenv("SW_FUZZ_PRINT")) {
    fprintf(stderr, "script does not compile: %s\n", lua_tostring(L, -1));
  }
  lua_close(L);
  setlocale(LC_ALL, "C"); /* a script may have changed it */
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  static out_buf o;
  fuzz_in in = {data, size};
  if (!tmp_dir[0]) {
    snprintf(tmp_dir, sizeof tmp_dir, "/tmp/swfuzz-XXXXXX");
    if (!mkdtemp(tmp_dir)) return 0;
    atexit(clean_tmp);
  }
  build_script(&o, &in);
  if (getenv("SW_FUZZ_PRINT")) fprintf(stderr, "---- script\n%.*s---- end\n", (int)o.n, o.s);
  run_script(o.s, o.n);
  return 0;
}
