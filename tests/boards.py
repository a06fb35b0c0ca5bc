"""Small board texts shared by tests (invented, for tests only)."""

MINIMAL = '''
[board]
name = "test board"

[[reference]]
id = "ref"
frequency = "25 MHz"

[[pll]]
id = "pll_a"
input = "ref"
vco = ["2.4 GHz", "3.2 GHz"]
pfd = ["1 MHz", "100 MHz"]
r = [1, 255]
n = [16, 4095]
mode = "fractional"
denominator = "2^24"
outputs.out0 = { divider = [1, 256] }
outputs.out1 = { divider = { min = 2, max = 256, step = 2 } }
settings = { r = 1, n = "100", outputs = { out0 = 20, out1 = 16 } }

[[consumer]]
id = "phy0"
source = "pll_a.out0"
frequency = "125 MHz"

[[consumer]]
id = "link"
source = "pll_a.out1"
frequency = "156.25 MHz"
'''

#: A board with a value for most numeric keys of docs/board-format.md (crystal load, temperature
#: curves, aging, oven power, PLL noise and loop filter, buffer jitter, converter and jitter budgets):
#: the base of the range tests and of the fuzz mutations that plant extreme values (issue 15).
RANGES_BOARD = '''
[board]
name = "range board"
temperature = ["-40 C", "85 C"]
lifetime = "10 years"

[[reference]]
id = "xtal"
frequency = "25 MHz"
kind = "crystal"
tolerance = "±10 ppm"
temperature_curve = { model = "at-cut", angle_offset_arcmin = 6 }
aging = { first_year = "±3 ppm", per_year = "±1 ppm" }
load = { specified = "10 pF", c1 = "5 fF", c0 = "2 pF", capacitors = ["18 pF", "18 pF"], stray = "3 pF" }

[[reference]]
id = "ocxo"
frequency = "10 MHz"
kind = "ocxo"
tolerance = "±0.1 ppm"
stability = "±0.01 ppm"
stability_range = ["-40 C", "85 C"]
aging = { first_year = "±0.1 ppm", per_year = "±0.05 ppm" }
power = { supply = "12 V", warmup_current = "0.7 A", steady = "2 W", warmup_time = "5 min" }

[[reference]]
id = "tf"
frequency = "32.768 kHz"
kind = "crystal"
tolerance = "±20 ppm"
temperature_curve = { model = "points", points = [[-40, "-20 ppm"], [25, "0 ppm"], [85, "-10 ppm"]] }
aging = { first_year = "±3 ppm", per_year = "±1 ppm" }

[[pll]]
id = "pll_a"
input = "xtal"
vco = ["2.4 GHz", "3.2 GHz"]
pfd = ["1 MHz", "100 MHz"]
r = [1, 255]
n = [16, 4095]
mode = "fractional"
denominator = "2^24"
outputs.out0 = { divider = [1, 256] }
outputs.out1 = { divider = { min = 2, max = 256, step = 2 } }
settings = { r = 1, n = "100", outputs = { out0 = 20, out1 = 16 } }
noise = { fom = "-226 dBc/Hz", flicker_fom = "-265 dBc/Hz", modulator_order = 3 }
loop_filter = { charge_pump = "2.5 mA", kvco = "30 MHz/V", bandwidth = "100 kHz", phase_margin = 55, gamma = 1.0 }

[[buffer]]
id = "fan"
input = "ocxo"
outputs = 2
additive_jitter = "60 fs"

[[consumer]]
id = "adc"
source = "pll_a.out0"
frequency = "125 MHz"
converter = { snr = "66 dB", f_in = "100 MHz" }

[[consumer]]
id = "link"
source = "pll_a.out1"
frequency = "156.25 MHz"
jitter = "1 ps"
jitter_band = ["12 kHz", "20 MHz"]
ppm = "±100 ppm"

[[consumer]]
id = "rtc"
source = "tf"
frequency = "32.768 kHz"
ppm = "±100 ppm"

[[consumer]]
id = "lab"
source = "fan"
frequency = "10 MHz"
[[reference]]
id = "tcxo"
frequency = "19.2 MHz"
kind = "tcxo"
tolerance = "±1 ppm"
stability = "±0.5 ppm"
stability_range = ["-40 C", "85 C"]
supply_sensitivity = "±0.1 ppm"
load_sensitivity = "±0.05 ppm"
trim = "±5 ppm"
aging = { first_year = "±1 ppm", law = "log", time_constant = "30 days" }
phase_noise = { points = [["1 kHz", "-130 dBc/Hz"], ["100 kHz", "-150 dBc/Hz"]], floor = "-160 dBc/Hz", spurs = [["50 kHz", "-90 dBc"]] }

[[reference]]
id = "tf2"
frequency = "32.768 kHz"
kind = "crystal"
tolerance = "±20 ppm"
temperature_curve = { model = "tuning-fork", coefficient_ppm = -0.034, turnover = 25 }
aging = { first_year = "±3 ppm", per_year = "±1 ppm" }

[[reference]]
id = "xtal2"
frequency = "25 MHz"
kind = "crystal"
tolerance = "±10 ppm"
temperature_curve = { model = "at-cut", coefficients_ppm = [-0.3, -0.00045, 0.0001095], reference = 25 }
aging = { first_year = "±3 ppm", per_year = "±1 ppm" }

[[pll]]
id = "pll_b"
input = "tcxo"
vco = ["2.4 GHz", "3.2 GHz"]
pfd = ["1 MHz", "100 MHz"]
n = [16, 4095]
outputs.o = { divider = [1, 64] }
settings = { r = 1, n = 125, outputs = { o = 25 } }
loop = { bandwidth = "100 kHz", phase_margin = "60 deg" }
noise = { fom = "-220 dBc/Hz", output_floor = "-155 dBc/Hz", vco_phase_noise = [["100 kHz", "-110 dBc/Hz"], ["1 MHz", "-135 dBc/Hz"]] }
spread = { mode = "down", depth = "0.5 %", rate = "31.5 kHz" }

[[pll]]
id = "pll_c"
input = "xtal2"
vco = ["2.4 GHz", "3.2 GHz"]
pfd = ["1 MHz", "100 MHz"]
n = [16, 4095]
outputs.o = { divider = [1, 64] }
settings = { r = 1, n = 100, outputs = { o = 25 } }
loop_filter = { charge_pump = "1 mA", kvco = "20 MHz/V", bandwidth = "50 kHz", phase_margin = 55, order = 3, pole_ratio = 0.5, r1 = "100 ohm", c1 = "100 nF", c2 = "5.6 nF", r3 = "750 ohm", c3 = "680 pF" }

[[pll]]
id = "pll_d"
input = "xtal2"
vco = ["2.4 GHz", "3.2 GHz"]
pfd = ["1 MHz", "100 MHz"]
n = [16, 4095]
outputs.o = { divider = [1, 64] }
settings = { r = 1, n = 100, outputs = { o = 20 } }
loop = { bandwidth = "200 kHz", damping = 0.707, model = "second-order" }

[[divider]]
id = "div"
input = "pll_b.o"
ratio = [1, 16]
settings = { ratio = 4 }
additive_noise = "-160 dBc/Hz"

[[consumer]]
id = "uart0"
source = "div"
frequency = "24 MHz"
uart = { frame = "8N1", baud = 115200, oversampling = 16 }

[[consumer]]
id = "can0"
source = "div"
frequency = "24 MHz"
can = { prop_seg = 5, phase_seg1 = 6, phase_seg2 = 4, sjw = 4 }

[[consumer]]
id = "cpu"
source = "pll_c.o"
frequency = "100 MHz"
max_synthesis_error = "±10 ppm"
jitter_pp = "50 ps"
jitter_band = ["12 kHz", "20 MHz"]

[[consumer]]
id = "serdes"
source = "pll_d.o"
frequency = "125 MHz"
jitter = "2 ps"
jitter_band = ["12 kHz", "20 MHz"]

[[consumer]]
id = "rtc2"
source = "tf2"
frequency = "32.768 kHz"
rtc = { drift = "1 s", per = "1 day" }
'''
