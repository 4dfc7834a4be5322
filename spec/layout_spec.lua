-- The house rules a reader cannot see from one file: which code may include
-- Lua's headers, and the one way the binding raises errors.  The core and
-- binding files are read as text.
local helpers = require "helpers.files"
local read = helpers.read_all
local function files(pattern) return helpers.lines_of("ls " .. pattern .. " 2>/dev/null") end

-- Lines of text that raise a binding error some other way than lsw_fail.
local function stray_raises(text)
  local bad = {}
  local n = 0
  for line in (text .. "\n"):gmatch("(.-)\n") do
    n = n + 1
    if line:find("luaL_error%s*%(") or line:find("lsw_error%s*%(") then bad[#bad + 1] = n end
  end
  return bad
end

local function lua_includes(text)
  return text:find('#%s*include%s*[<"]lua%.h') or text:find('#%s*include%s*[<"]lauxlib%.h')
    or text:find('#%s*include%s*[<"]lualib%.h')
end

describe("segwise layout", function()
  it("the matchers can fail", function()
    assert.are.same({ 2 }, stray_raises('x();\n  return luaL_error(L, "segwise.fit: no");\n'))
    assert.are.same({}, stray_raises('  return lsw_fail(L, "fit", "no");\n'))
    assert.is_truthy(lua_includes('#include <lauxlib.h>\n'))
    assert.is_falsy(lua_includes('#include "pwl/pwl.h"\n'))
  end)

  it("no core file includes a Lua header", function()
    local core = files("csrc/core/*/*.[ch]")
    assert.is_true(#core > 20, "the core files were not found")
    for _, f in ipairs(core) do assert.is_falsy(lua_includes(read(f)), f) end
  end)

  it("the binding raises every error through lsw_fail", function()
    local bind = files("csrc/bind/*.c")
    assert.is_true(#bind >= 8, "the binding files were not found")
    for _, f in ipairs(bind) do
      local bad = stray_raises(read(f))
      assert.are.same({}, bad, f .. ": lines raising an error another way")
    end
  end)
end)
