-- Files in and out: sw.curve.read (a curve from two columns of a text file),
-- sw.array (contiguous doubles, with .read for one file column) and
-- sw.pwl.load (a model saved by m:save).  The reading itself is C
-- (csrc/core/text/textread.c); columns go straight into arrays, never Lua tables.
local numtext = require "segwise.report.num" -- numbers with a '.' in any locale
local core = require "segwise.core"
local util = require "segwise.util"

-- The names this module adds, by the table they go in.
local M = { curve = {}, pwl = {} }

local check_opts, describe = util.check_opts, util.describe
-- the file each curve read here came from, for a fit's provenance
core.curve_sources = core.curve_sources or setmetatable({}, { __mode = "k" })

-- The core function's error at the user's call site, under the public
-- name (see util.call_as).
local function call(fname, f, ...) return util.call_as(fname, f, ...) end

local function check_path(fname, path)
  if type(path) ~= "string" then
    error(("segwise.%s: path must be a string (got %s)"):format(fname, describe(path)), 3)
  end
end

local function check_column(fname, what, v)
  if v ~= nil and type(v) ~= "string" and math.type(v) ~= "integer" then
    error(("segwise.%s: %s must be a header name or a column number (got %s)"):format(fname,
      what, describe(v)), 3)
  end
end

-- After the samples were refused: the file lines of the first repeated or
-- out-of-order x, read again with line numbers (the error path only).
local function order_fault(path, opts, copts, sort)
  local ok, xs, _, lines = pcall(core.read_columns, path, opts.x or 1, opts.y or 2, copts, true)
  if not ok then return nil end
  local n, fmt = #xs, "%s:%d: x = %.17g "
  if not sort then
    for i = 2, n do
      local a, b = xs[i - 1], xs[i]
      if b < a then
        return numtext.format(fmt .. "comes after x = %.17g on line %d; x must increase "
          .. "(or pass sort = true)", path, lines[i], b, a, lines[i - 1])
      elseif b == a and opts.duplicates ~= "mean" then
        return numtext.format(fmt .. "repeats line %d; pass duplicates = \"mean\" to average "
          .. "repeats", path, lines[i], b, lines[i - 1])
      end
    end
  elseif opts.duplicates ~= "mean" then
    local seen = {}
    for i = 1, n do
      local v = xs[i]
      if seen[v] then
        return numtext.format(fmt .. "repeats line %d; pass duplicates = \"mean\" to average "
          .. "repeats", path, lines[i], v, seen[v])
      end
      seen[v] = lines[i]
    end
  end
  return nil
end

-- sw.curve.read(path, {x=, y=, scale={x=, y=}, duplicates=, sort=,
-- delimiter=, header=}): x and y are header names or 1-based column
-- numbers (default 1 and 2); sort defaults to true for files.
function M.curve.read(path, opts)
  check_path("curve.read", path)
  opts = check_opts("curve.read", opts, {
    x = "string|number", y = "string|number", scale = "table", duplicates = { "error", "mean" },
    sort = "boolean", delimiter = "string", header = "boolean" })
  check_column("curve.read", "x", opts.x)
  check_column("curve.read", "y", opts.y)
  if opts.scale ~= nil then
    check_opts("curve.read", opts.scale, { x = "number", y = "number" })
  end
  local copts = { scale = opts.scale, delimiter = opts.delimiter, header = opts.header }
  local xs, ys = call("curve.read", core.read_columns, path, opts.x or 1, opts.y or 2, copts)
  local sort = opts.sort
  if sort == nil then sort = true end
  local ok, c = pcall(core.curve_samples, xs, ys, sort, opts.duplicates == "mean")
  xs:free()
  ys:free()
  if not ok then
    local where = order_fault(path, opts, copts, sort)
    local msg = where or (path .. ": " .. numtext.str(c):gsub("^.-segwise%.curve%.samples: ", ""))
    error("segwise.curve.read: " .. msg, 2)
  end
  core.curve_sources[c] = path
  return c
end

-- sw.pwl.load(path) -> model, x unit, y unit
function M.pwl.load(path)
  check_path("pwl.load", path)
  local m, xunit, yunit = call("pwl.load", core.load_model, path)
  return m, xunit, yunit
end

-- sw.array(n | table | array) and sw.array.read(path [, column [, opts]])
M.array = setmetatable({
  read = function(path, column, opts)
    check_path("array.read", path)
    check_column("array.read", "column", column)
    opts = check_opts("array.read", opts,
      { scale = "number", delimiter = "string", header = "boolean" })
    local a = call("array.read", core.array_read, path, column, opts)
    return a
  end,
}, {
  __call = function(_, v)
    local a = call("array", core.array, v)
    return a
  end,
})

return M
