-- Every line of the project's own Lua (lua/, examples/, spec/) and C
-- (csrc/) is at most 100 characters wide, counted as UTF-8 characters, not
-- bytes ("Ω" is one column).  The files are read as text.
local LIMIT = 100

-- Files whose owners still owe a rewrap (none now); drop a name once its
-- file is clean.
local OWED = {}

local lines_of_command = require("helpers.files").lines_of

-- The tracked files (git), or every file on disk where there is no git.
local function source_files()
  local files = lines_of_command("git ls-files -- 'lua/*.lua' 'examples/*.lua' 'spec/*.lua' "
    .. "'csrc/*.c' 'csrc/*.h' 2>/dev/null")
  if #files == 0 then
    files = lines_of_command("find lua examples spec -name '*.lua' 2>/dev/null; "
      .. "find csrc -name '*.[ch]' 2>/dev/null")
  end
  local keep = {}
  for _, f in ipairs(files) do
    if not f:find("^spec/fuzz/corpus/") then keep[#keep + 1] = f end
  end
  return keep
end

-- Invalid UTF-8 counts in bytes, so a broken file cannot hide a long line.
local function width(line)
  return utf8.len(line) or #line
end

-- "name:line (width characters)" for each line over the limit.
local function long_lines(text, name)
  local bad, n = {}, 0
  for line in (text .. "\n"):gmatch("(.-)\n") do
    n = n + 1
    local w = width((line:gsub("\r$", "")))
    if w > LIMIT then bad[#bad + 1] = ("%s:%d (%d characters)"):format(name, n, w) end
  end
  return bad
end

local function read(path)
  local f = io.open(path, "rb")
  if not f then return nil end -- tracked but moved or deleted in this checkout
  local s = f:read("a")
  f:close()
  return s
end

describe("segwise line width", function()
  it("the matcher can fail, and counts characters, not bytes", function()
    local wide = ("x"):rep(101)
    assert.are.same({ "f.lua:2 (101 characters)" }, long_lines("short\n" .. wide .. "\n", "f.lua"))
    assert.are.same({}, long_lines(("x"):rep(100) .. "\r\n" .. ("x"):rep(100), "f.lua"))
    assert.are.same({}, long_lines(("Ω"):rep(100), "f.c"))
    assert.are.same({ "f.c:1 (101 characters)" }, long_lines(("Ω"):rep(101), "f.c"))
    -- invalid UTF-8 (a lone continuation byte) falls back to bytes
    assert.are.same({ "f.c:1 (101 characters)" }, long_lines(("\128"):rep(101), "f.c"))
  end)

  it("finds the Lua and C files", function()
    local seen, lua, c = {}, 0, 0
    for _, f in ipairs(source_files()) do
      seen[f] = true
      if f:find("%.lua$") then lua = lua + 1 elseif f:find("%.[ch]$") then c = c + 1 end
    end
    assert.is_true(lua > 40, "the Lua files were not found")
    assert.is_true(c > 20, "the C files were not found")
    assert.is_true(seen["lua/segwise.lua"], "lua/segwise.lua is not among them")
    assert.is_true(seen["spec/run.lua"], "spec/run.lua is not among them")
  end)

  it("keeps every line within 100 characters", function()
    local bad = {}
    for _, f in ipairs(source_files()) do
      local text = not OWED[f] and read(f)
      if text then
        for _, b in ipairs(long_lines(text, f)) do bad[#bad + 1] = b end
      end
    end
    assert.is_true(#bad == 0, "lines over " .. LIMIT .. " characters:\n" .. table.concat(bad, "\n"))
  end)
end)
