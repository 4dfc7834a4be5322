-- Argument checking shared by the Lua side: every message names the
-- function and the option at fault.
local util = {}

local function describe(v)
  local t = type(v)
  if t == "number" then return ("%s (%.6g)"):format(t, v) end
  if t == "string" then return ("string %q"):format(v) end
  return t
end

-- The one message for a key that is not among the known ones:
-- "segwise.<fname>: unknown <noun> '<key>' (known: a, b, c)".
function util.unknown(fname, noun, key, known, level)
  local names = {}
  for _, name in ipairs(known) do
    names[#names + 1] = math.type(name) == "integer" and ("[%d]"):format(name) or tostring(name)
  end
  table.sort(names)
  error(("segwise.%s: unknown %s '%s' (known: %s)"):format(fname, noun, tostring(key),
    #names > 0 and table.concat(names, ", ") or "none"), level + 1)
end

local function spec_names(spec)
  local names = {}
  for name in pairs(spec) do names[#names + 1] = name end
  return names
end

-- spec maps option name -> "number" | "string" | "boolean" | "table" |
-- "function" | "userdata" | "any" | {enum values...} | "number|table"
-- (alternatives).  noun names what the keys are ("option" unless told);
-- level counts as error()'s does from the caller of check_opts' caller
-- (default 3: the user of a public function that calls check_opts).
function util.check_opts(fname, opts, spec, noun, level)
  noun, level = noun or "option", level or 3
  if opts == nil then return {} end
  if type(opts) ~= "table" then
    error(("segwise.%s: %ss must be a table (got %s)"):format(fname, noun, describe(opts)), level)
  end
  for k, v in pairs(opts) do
    local want = spec[k]
    if want == nil then util.unknown(fname, noun, k, spec_names(spec), level) end
    if type(want) == "table" then
      local ok = false
      for _, e in ipairs(want) do if v == e then ok = true end end
      if not ok then
        local quoted = {}
        for _, e in ipairs(want) do quoted[#quoted + 1] = ("%q"):format(tostring(e)) end
        error(("segwise.%s: %s %s must be one of %s (got %s)"):format(fname, noun, k,
          table.concat(quoted, ", "), describe(v)), level)
      end
    elseif want ~= "any" then
      local ok = false
      for alt in want:gmatch("[^|]+") do
        if type(v) == alt or (alt == "table" and util.is_array(v)) then ok = true end
      end
      if not ok then
        error(("segwise.%s: %s %s must be a %s (got %s)"):format(fname, noun, k,
          want:gsub("|", " or "), describe(v)), level)
      end
      if type(v) == "number" and v ~= v then
        error(("segwise.%s: %s %s is NaN"):format(fname, noun, k), level)
      end
    end
  end
  return opts
end

-- A finite number argument, named in the message when it is not.
function util.check_number(fname, name, v, level)
  if type(v) ~= "number" then
    error(("segwise.%s: %s must be a number (got %s)"):format(fname, name, describe(v)),
      (level or 2) + 1)
  end
  if v ~= v or v == math.huge or v == -math.huge then
    error(("segwise.%s: %s must be finite (got %s)"):format(fname, name, tostring(v)),
      (level or 2) + 1)
  end
  return v
end

function util.is_model(v)
  local mt = getmetatable(v)
  return type(v) == "userdata" and mt ~= nil and mt.__name == "segwise.Model"
end

function util.is_array(v)
  local mt = getmetatable(v)
  return type(v) == "userdata" and mt ~= nil and mt.__name == "segwise.Array"
end

-- This library's own sources: lua/segwise.lua and everything under
-- lua/segwise/ (wherever they are installed).
local LIB_ROOT = debug.getinfo(1, "S").source:match("^(@.*)[/\\]segwise[/\\]util%.lua$")
local function in_library(source)
  if not LIB_ROOT then return false end
  local n = #LIB_ROOT
  return source:sub(1, n) == LIB_ROOT and
    (source:sub(n + 1) == "/segwise.lua" or source:sub(n + 1, n + 9) == "/segwise/")
end

-- The level, as error() counts it from the caller of this function, of the
-- first frame that is not this library's: the user's line (or the C
-- function, such as pcall, that called the library).
local function user_level()
  local level = 3
  while true do
    local info = debug.getinfo(level, "S")
    if not info then return 1 end
    if not in_library(info.source) then return level - 1 end
    level = level + 1
  end
end

-- Calls core function f for the public function fname, so that its error
-- points at the user's line, not at this library's: a segwise message loses
-- the library position and is raised again at the first frame outside the
-- library, found by walking the stack (no level to count by hand, tail
-- calls or not); any other error value (a callback's own) passes through
-- unchanged.  rename: the message goes under fname even when the core named
-- its own function.
local function call_with(fname, rename, f, ...)
  local r = table.pack(pcall(f, ...))
  if r[1] then return table.unpack(r, 2, r.n) end
  local msg = r[2]
  if type(msg) == "string" then
    local bare = msg:match("^[^\n]-:%d+: (segwise[%.:].*)$") or msg:match("^segwise[%.:].*$")
    if bare then
      -- a core function called through pcall has no name of its own
      bare = bare:gsub(rename and "^segwise[%w_.:]*: " or "^segwise: ",
        "segwise." .. fname .. ": ", 1)
      error(bare, user_level())
    end
  end
  error(msg, 0)
end

-- Raises msg at the user's line (the first frame outside this library).
function util.raise(msg) error(msg, user_level()) end

function util.call(fname, f, ...) return call_with(fname, false, f, ...) end
function util.call_as(fname, f, ...) return call_with(fname, true, f, ...) end

util.describe = describe
return util
