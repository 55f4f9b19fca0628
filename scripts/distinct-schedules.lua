-- wrk script: every request asks for a different 360-payment schedule (the
-- principal changes by one cent each time), so no answer is served from the
-- answer store: each one is computed.
local counter = 0
request = function()
  counter = counter + 1
  local cents = 10000000 + counter * 7 + math.random(0, 6)
  local principal = string.format("%d.%02d", math.floor(cents / 100), cents % 100)
  return wrk.format("GET", "/api/v1/loans/schedule?principal=" .. principal .. "&annual_rate_percent=6&term_months=360")
end
