--- segwise.report.json: a small JSON encoder for handing results to
-- notebooks and other tools.
-- @module segwise.report.json

local numtext = require "segwise.report.num" -- numbers with a '.' in any locale
local write = require "segwise.report.write"

local huge = math.huge
local fmt = numtext.format
local concat = table.concat

local JSON_ESC = { ['"'] = '\\"', ["\\"] = "\\\\", ["\b"] = "\\b", ["\f"] = "\\f",
  ["\n"] = "\\n", ["\r"] = "\\r", ["\t"] = "\\t" }

local function json_string(str)
  return '"' .. str:gsub('[%c"\\]', function(c)
    return JSON_ESC[c] or fmt("\\u%04x", c:byte())
  end) .. '"'
end

local function json_value(v, full, seen, path, out)
  local t = type(v)
  if v == nil then out[#out + 1] = "null"
  elseif t == "boolean" then out[#out + 1] = numtext.str(v)
  elseif t == "number" then
    -- JSON has no NaN or infinity: they become null
    if v ~= v or v == huge or v == -huge then out[#out + 1] = "null"
    elseif math.type(v) == "integer" then out[#out + 1] = numtext.str(v)
    else out[#out + 1] = fmt(full and "%.17g" or "%.10g", v) end
  elseif t == "string" then out[#out + 1] = json_string(v)
  elseif t == "table" or t == "userdata" then
    if seen[v] then error("segwise.report.json: " .. path .. " refers back to itself", 0) end
    local n = 0
    local ok_len, len = pcall(function() return #v end)
    if t == "userdata" then
      -- arrays of doubles (sw.array) have a length and numeric indices
      if not ok_len then
        error("segwise.report.json: " .. path .. " is a userdata without a length", 0)
      end
      n = len
    else
      local count = 0
      for _ in pairs(v) do count = count + 1 end
      n = (ok_len and len == count) and len or -1
      if count == 0 then n = 0 end
    end
    seen[v] = true
    if n >= 0 then
      out[#out + 1] = "["
      for k = 1, n do
        if k > 1 then out[#out + 1] = "," end
        json_value(v[k], full, seen, path .. "[" .. k .. "]", out)
      end
      out[#out + 1] = "]"
    else
      local keys = {}
      for k in pairs(v) do
        local kt = type(k)
        if kt ~= "string" and kt ~= "number" then
          error("segwise.report.json: " .. path .. " has a " .. kt .. " key", 0)
        end
        keys[#keys + 1] = k
      end
      table.sort(keys, function(a, b) return numtext.str(a) < numtext.str(b) end)
      out[#out + 1] = "{"
      for i, k in ipairs(keys) do
        if i > 1 then out[#out + 1] = "," end
        out[#out + 1] = json_string(numtext.str(k))
        out[#out + 1] = ":"
        json_value(v[k], full, seen, path .. "." .. numtext.str(k), out)
      end
      out[#out + 1] = "}"
    end
    seen[v] = nil
  else
    error("segwise.report.json: " .. path .. " is a " .. t .. ", which JSON cannot hold", 0)
  end
end

--- Encodes a Lua value as JSON (for notebooks and other tools): tables
-- with keys 1..n become arrays, other tables objects with sorted keys;
-- arrays of doubles (sw.array) become arrays; NaN and infinities become
-- null (JSON has none).  Numbers keep 10 significant digits, or 17 with
-- opts.full.
-- @param value
-- @tparam[opt] table opts {out = path or handle, full = false}
-- @treturn string
local function json(value, opts)
  opts = opts or {}
  local out = {}
  local ok, err = pcall(json_value, value, opts.full, {}, "value", out)
  if not ok then error(err, 2) end
  return write(opts.out, concat(out) .. "\n", "segwise.report.json")
end

return json
