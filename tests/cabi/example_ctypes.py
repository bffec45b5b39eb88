# weft from Python with the standard library only: pooled OLS of inv on value and
# capital with cluster-by-firm standard errors. Run: python3 example_ctypes.py [libweft]
import csv, ctypes, sys
weft = ctypes.CDLL(sys.argv[1] if len(sys.argv) > 1 else "libweft.so.0")
weft.weft_last_error.restype = ctypes.c_char_p
def check(status):
    if status != 0: raise RuntimeError(weft.weft_last_error().decode())
rows = list(csv.DictReader(open("grunfeld.csv")))
column = lambda name: (ctypes.c_double * len(rows))(*[float(r[name]) for r in rows])
panel, model, number = ctypes.c_void_p(), ctypes.c_void_p(), ctypes.c_double()
check(weft.weft_panel_new(ctypes.byref(panel), ctypes.c_size_t(len(rows)), ctypes.c_size_t(2)))
check(weft.weft_panel_set_units_number(panel, column("firm"), None))
check(weft.weft_panel_set_periods(panel, column("year"), None))
check(weft.weft_panel_set_outcome(panel, b"inv", column("inv"), None))
for name in (b"value", b"capital"):
    check(weft.weft_panel_add_regressor(panel, name, column(name.decode()), None))
check(weft.weft_model_new_text(ctypes.byref(model), panel, b"pooled cluster"))
for name in (b"value", b"capital"):
    for what in (b"estimate", b"se"):
        check(weft.weft_model_value(model, what, name, ctypes.byref(number)))
        print(name.decode(), what.decode(), f"{number.value:.12g}")
weft.weft_model_free(model); weft.weft_panel_free(panel)
