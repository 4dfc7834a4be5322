-- The README's tour output must be what examples/tour.lua really prints.
-- Numbers are compared to 3 significant digits so that a rounding
-- difference in the last printed digit on another machine does not count.
describe("README tour", function()
  local function normalise(text)
    return (text:gsub("%-?%d+%.?%d*e?[%+%-]?%d*", function(num)
      local v = tonumber(num)
      return v and ("%.3g"):format(v) or num
    end))
  end

  it("shows the real output of examples/tour.lua", function()
    local f = assert(io.open("README.md"))
    local readme = f:read("a")
    f:close()
    local block = readme:match("Its output, as printed:%s*```\n(.-)\n```")
    assert.is_string(block, "README has no tour output block")
    local env = ("LUA_PATH=%q LUA_CPATH=%q "):format(package.path, package.cpath)
    local p = assert(io.popen(env .. (os.getenv("LUA") or "lua5.4") .. " examples/tour.lua 2>&1"))
    local out = p:read("a"):gsub("\n$", "")
    p:close()
    local want, got = {}, {}
    for line in (normalise(block) .. "\n"):gmatch("(.-)\n") do want[#want + 1] = line end
    for line in (normalise(out) .. "\n"):gmatch("(.-)\n") do got[#got + 1] = line end
    assert.are.same(want, got)
  end)
end)
