"""Loading libpixpost.so and the ctypes mirrors of the C structs we use.

The structs below mirror include/pixpost/*.h field for field (ctypes lays
them out with the C compiler's alignment rules); tests/ref_python.py
compiles a small C program printing sizeof/offsetof of each and compares
them with these, so a header change that is not mirrored here fails there.
pp_result is not mirrored: it is kept in an opaque buffer of
RESULT_BUFFER bytes (the test checks sizeof(pp_result) fits) and only
passed back to the library (pp_output_write, pp_result_free).
"""
import ctypes
import ctypes.util
import os

c_size_t = ctypes.c_size_t
c_double = ctypes.c_double
c_int = ctypes.c_int
c_uint = ctypes.c_uint
c_ulong = ctypes.c_ulong
c_char_p = ctypes.c_char_p
c_void_p = ctypes.c_void_p

RESULT_BUFFER = 1 << 16


class Image(ctypes.Structure):  # pp_image (image.h)
    _fields_ = [("width", c_size_t), ("height", c_size_t),
                ("data", ctypes.POINTER(c_double)), ("depth", c_size_t)]


class Shape(ctypes.Structure):  # pp_shape (shape.h)
    _fields_ = [("rank", c_int), ("n", c_size_t * 3)]


class NoiseSpec(ctypes.Structure):  # pp_noise_spec (noise.h)
    _fields_ = [("kind", c_int), ("sigma", c_double), ("sigma_set", c_int),
                ("gain", c_double), ("offset", c_double), ("read", c_double)]


class PriorSpec(ctypes.Structure):  # pp_prior_spec (prior.h)
    _fields_ = [("kind", c_int), ("range", c_double), ("nu", c_double),
                ("block", c_size_t), ("mean", c_double), ("mean_set", c_int),
                ("delta", c_double), ("delta_set", c_int)]


PP_PSF_FILE = 2  # pp_psf_kind (psf.h): GAUSSIAN, AIRY, FILE, WIDEFIELD


class PsfSpec(ctypes.Structure):  # pp_psf_spec (psf.h)
    _fields_ = [("kind", c_int), ("sigma", c_double), ("na", c_double),
                ("wavelength", c_double), ("pixel", c_double),
                ("path", ctypes.c_char * 4096), ("width_auto", c_int),
                ("width_lo", c_double), ("width_hi", c_double), ("sigma_z", c_double),
                ("step", c_double), ("n", c_double), ("sample_n", c_double),
                ("depth", c_double)]


PROGRESS_FN = ctypes.CFUNCTYPE(None, c_void_p, ctypes.c_ulonglong, ctypes.c_ulonglong)


class SamplerConfig(ctypes.Structure):  # pp_sampler_config (sampler.h)
    _fields_ = [("kind", c_int), ("chains", c_uint), ("burn", c_ulong), ("iters", c_ulong),
                ("thin", c_ulong), ("iters_auto", c_int), ("max_seconds", c_double),
                ("max_iters", c_ulong), ("seed", ctypes.c_uint64), ("boundary", c_int),
                ("threads", c_int), ("level", c_double), ("noise", NoiseSpec),
                ("prior", PriorSpec), ("hyper_lambda", c_double * 2),
                ("hyper_delta", c_double * 2), ("fft_effort", c_int), ("positivity", c_int),
                ("background", c_double), ("psf", PsfSpec), ("progress", PROGRESS_FN),
                ("progress_ctx", c_void_p), ("stop", ctypes.POINTER(c_int)),
                ("setting_names", c_void_p), ("voxel", c_double * 3), ("regions", c_void_p),
                ("profiles", c_void_p), ("spots", c_void_p),
                ("above", ctypes.POINTER(c_double)), ("nabove", c_size_t),
                ("censored", c_void_p), ("censor_level", c_double)]


class ReadOptions(ctypes.Structure):  # pp_read_options (io.h)
    _fields_ = [("channel", c_int), ("max_pixels", c_size_t), ("page", c_uint),
                ("setting_names", c_void_p)]


class ReadInfo(ctypes.Structure):  # pp_read_info (io.h)
    _fields_ = [("pages", c_uint), ("bits", c_uint), ("is_float", c_int),
                ("was_colour", c_int), ("nonfinite", c_size_t)]


class Saturation(ctypes.Structure):  # pp_saturation (saturation.h)
    _fields_ = [("rule", c_int), ("level", c_double), ("count", c_size_t),
                ("finite", c_size_t)]


class Trace(ctypes.Structure):  # pp_trace (sampler.h)
    _fields_ = [("chains", c_uint), ("kept", c_size_t), ("ncols", c_size_t),
                ("names", ctypes.POINTER(c_char_p)), ("values", ctypes.POINTER(c_double))]


class RunInfo(ctypes.Structure):  # pp_run_info (output.h); pointers we never set as void*
    _fields_ = [("input_path", c_char_p), ("input_part", c_char_p),
                ("voxel_um", ctypes.POINTER(c_double)), ("psf_spec", c_char_p),
                ("noise_spec", c_char_p), ("prior_spec", c_char_p), ("command_line", c_char_p),
                ("seconds_total", c_double), ("fft_plans", c_char_p), ("masked", c_size_t),
                ("saturated", c_size_t), ("saturation_level", c_double),
                ("saturation_rule", c_int), ("data_checks", c_void_p), ("predictive", c_void_p),
                ("noise_estimate", c_void_p), ("noise_chosen", c_void_p),
                ("noise_note", c_char_p), ("regions", c_void_p),
                ("saturated_as", c_char_p)]


MIRRORED = {"pp_run_info": RunInfo, "pp_image": Image, "pp_shape": Shape, "pp_noise_spec": NoiseSpec,
            "pp_prior_spec": PriorSpec, "pp_psf_spec": PsfSpec,
            "pp_sampler_config": SamplerConfig, "pp_read_options": ReadOptions,
            "pp_read_info": ReadInfo, "pp_saturation": Saturation, "pp_trace": Trace}


def _find():
    env = os.environ.get("PIXPOST_LIBRARY")
    if env:
        return env, "PIXPOST_LIBRARY"
    found = ctypes.util.find_library("pixpost")
    if found:
        return found, "the system's library path"
    for d in ("/usr/local/lib", "/usr/local/lib64", "/usr/lib", "/usr/lib/x86_64-linux-gnu"):
        p = os.path.join(d, "libpixpost.so.0")
        if os.path.exists(p):
            return p, d
    return None, None


def load():
    path, where = _find()
    if path is None:
        raise OSError("pixpost: libpixpost.so not found: install pixpost (cmake --install) or "
                      "set PIXPOST_LIBRARY to the path of libpixpost.so")
    try:
        lib = ctypes.CDLL(path)  # CDLL (not PyDLL): the GIL is released during each call
    except OSError as e:
        raise OSError("pixpost: cannot load %s (from %s): %s; set PIXPOST_LIBRARY to the "
                      "path of libpixpost.so" % (path, where, e)) from None
    P = ctypes.POINTER
    protos = {
        "pp_version": (c_char_p, []),
        "pp_error_message": (c_char_p, []),
        "pp_status_name": (c_char_p, [c_int]),
        "pp_image_create3": (c_int, [c_size_t, c_size_t, c_size_t, P(P(Image))]),
        "pp_image_free": (None, [P(Image)]),
        "pp_read_options_defaults": (None, [P(ReadOptions)]),
        "pp_image_read": (c_int, [c_char_p, P(ReadOptions), P(P(Image)), P(ReadInfo)]),
        "pp_saturation_find": (None, [P(Image), c_uint, c_int, P(Saturation)]),
        "pp_saturation_mark": (c_size_t, [P(Image), P(Saturation)]),
        "pp_sampler_defaults": (None, [P(SamplerConfig)]),
        "pp_psf_parse": (c_int, [c_char_p, c_void_p, P(PsfSpec)]),
        "pp_psf_is_3d": (c_int, [P(PsfSpec)]),
        "pp_psf_make": (c_int, [P(PsfSpec), c_size_t, P(P(Image))]),
        "pp_psf_make3": (c_int, [P(PsfSpec), c_size_t, c_size_t, P(Shape), P(P(c_double))]),
        "pp_noise_parse": (c_int, [c_char_p, c_void_p, P(NoiseSpec)]),
        "pp_prior_parse": (c_int, [c_char_p, c_void_p, P(PriorSpec)]),
        "pp_boundary_parse": (c_int, [c_char_p, c_void_p, P(c_int)]),
        "pp_sampler_kind_parse": (c_int, [c_char_p, c_void_p, P(c_int)]),
        "pp_model_simulate": (c_int, [P(Image), P(Image), c_int, P(NoiseSpec),
                                      ctypes.c_uint64, c_void_p, P(P(Image))]),
        "pp_sampler_create": (c_int, [P(SamplerConfig), P(Image), P(Image), P(c_void_p)]),
        "pp_sampler_run": (c_int, [c_void_p]),
        "pp_sampler_free": (None, [c_void_p]),
        "pp_sampler_mean": (P(Image), [c_void_p]),
        "pp_sampler_sd": (P(Image), [c_void_p]),
        "pp_sampler_lo": (P(Image), [c_void_p]),
        "pp_sampler_hi": (P(Image), [c_void_p]),
        "pp_sampler_rhat_map": (P(Image), [c_void_p]),
        "pp_sampler_mcse_map": (P(Image), [c_void_p]),
        "pp_sampler_trace": (P(Trace), [c_void_p]),
        "pp_sampler_result": (c_int, [c_void_p, c_void_p]),
        "pp_result_free": (None, [c_void_p]),
        "pp_regions_plan": (c_int, [P(Image), c_size_t, c_size_t, c_size_t, P(c_void_p)]),
        "pp_regions_free": (None, [c_void_p]),
        "pp_regions_count": (c_size_t, [c_void_p]),
        "pp_regions_label": (ctypes.c_long, [c_void_p, c_size_t]),
        "pp_regions_pixels": (c_size_t, [c_void_p, c_size_t]),
        "pp_sampler_region_draws": (P(c_double), [c_void_p, P(c_size_t), P(c_size_t)]),
        "pp_output_write": (c_int, [c_char_p, c_void_p, P(Image), P(RunInfo)]),
    }
    for name, (res, args) in protos.items():
        f = getattr(lib, name)
        f.restype = res
        f.argtypes = args
    libc = ctypes.CDLL(None)
    libc.free.argtypes = [c_void_p]
    libc.free.restype = None
    return lib, libc, path
