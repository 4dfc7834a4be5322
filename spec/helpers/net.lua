-- Shared checks for the network specs: Kirchhoff's laws and the element
-- laws, verified from an operating point and the network's own listing.
local H = {}

-- Kirchhoff's current law at every node and each element's law, relative
-- tolerance rel (1e-12 unless told) against the largest current or
-- voltage involved.
-- (Specs set H.assert = assert: busted's assert lives in the spec's scope.)
function H.check_kirchhoff(net, op, rel)
  local assert = H.assert
  rel = rel or 1e-12
  local info = net:info()
  local sum, mag = {}, {}
  local vmax = 0
  for _, n in ipairs(info.nodes) do
    sum[n], mag[n] = 0, 0
    vmax = math.max(vmax, math.abs(op.v[n]))
  end
  for _, e in ipairs(info.elements) do
    local i = op.i[e.name]
    local a, b = e.nodes[1], e.nodes[2]
    sum[a], mag[a] = sum[a] + i, mag[a] + math.abs(i)
    sum[b], mag[b] = sum[b] - i, mag[b] + math.abs(i)
    local v = op.v[a] - op.v[b]
    local vd = op.vd[e.name]
    assert.is.near(v, op.vd[e.name], rel * (vmax + 1e-300))
    if e.kind == "resistor" then
      assert.is.near(vd / e.value, i, rel * (math.abs(i) + math.abs(vd / e.value)) + 1e-300)
    elseif e.kind == "vsource" then
      assert.is.near(e.value, v, rel * (math.abs(e.value) + vmax))
    elseif e.kind == "isource" then
      assert.are.equal(e.value, i)
    elseif e.kind == "element" then
      -- the device sits on its reported segment's line
      local seg = net:segments(e.name)
      local s
      for _, q in ipairs(seg) do if q.label == op.state[e.name] then s = q end end
      local x, y = v, i
      if e.x == "i" then x, y = i, v end
      assert.is.near(s.slope * x + s.intercept, y,
        1e-10 * (math.abs(y) + math.abs(s.intercept) + math.abs(s.slope * x)) + 1e-300)
    end
  end
  for _, n in ipairs(info.nodes) do
    if n ~= "0" then
      assert.is_true(math.abs(sum[n]) <= rel * mag[n] + 1e-300,
        ("KCL at node %s: sum %g of magnitude %g"):format(n, sum[n], mag[n]))
    end
  end
end

-- Bisection on a monotone function f over [a, b] with f(a) and f(b) of
-- opposite sign, to the last bit.
function H.bisect(f, a, b)
  local fa = f(a)
  for _ = 1, 200 do
    local m = 0.5 * (a + b)
    if m == a or m == b then break end
    local fm = f(m)
    if (fm < 0) == (fa < 0) then a, fa = m, fm else b = m end
  end
  return 0.5 * (a + b)
end

-- An N-shaped (tunnel-diode-like) i(v), invented: slopes 0.1, -0.04,
-- 0.09 S with knots at 0.1 V and 0.3 V; eventually passive.
function H.ndevice(sw)
  return sw.pwl { x = { 0, 0.1, 0.3, 0.5 }, y = { 0, 0.01, 0.002, 0.02 } }
end

return H
