// Six stages of every kind with every element value and device size left to the planner: the
// chain the planning benchmark times and a planner test checks. Invented; the checks are its own
// targets and limits.
#pragma once

namespace peakplan::test {

constexpr const char* kSixOpenStages = R"(
[target]
gain = "42 dB"
bandwidth = "36 GHz"
[limits]
overshoot = "5 %"
peaking = "1 dB"
group_delay_ripple = "2 ps"
[technology]
ft = "250 GHz"
c_out_ratio = 0.6
max_inductance = "1 nH"
max_gm = "80 mS"
k_range = [0.2, 0.7]
[[stage]]
id = "s1"
kind = "tcoil"
gm = "auto"
rd = "auto"
l1 = "auto"
l2 = "auto"
k = "auto"
cb = "auto"
c_load = "60 fF"
[[stage]]
id = "s2"
kind = "shunt"
gm = "auto"
rd = "auto"
l = "auto"
[[stage]]
id = "s3"
kind = "series"
gm = "auto"
rd = "auto"
l = "auto"
[[stage]]
id = "s4"
kind = "shunt"
gm = "auto"
rd = "auto"
l = "auto"
[[stage]]
id = "s5"
kind = "shunt"
gm = "auto"
rd = "auto"
l = "auto"
[[stage]]
id = "s6"
kind = "plain"
gm = "auto"
rd = "auto"
c_load = "20 fF"
)";


}  // namespace peakplan::test
