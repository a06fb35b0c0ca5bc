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
'''
