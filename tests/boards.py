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
