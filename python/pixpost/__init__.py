"""pixpost: the posterior of a deblurred microscope image by MCMC, from Python.

A thin ctypes layer over libpixpost.so (found through the PIXPOST_LIBRARY
environment variable, else the system's library path). ctypes releases the
GIL for the length of every library call, so other Python threads run while
a sample is drawn. docs/developers.md "Python" describes the module.
"""
import ctypes
import json
import os
import shutil
import tempfile

import numpy as np

from . import _lib

__all__ = ["PixpostError", "Result", "sample", "psf", "simulate", "version", "library_path"]

_L, _libc, library_path = _lib.load()


class PixpostError(Exception):
    """A library failure: .status (the pp_status number), .status_name and
    .message (the library's sentence, pp_error_message)."""

    def __init__(self, status, message, what=None):
        self.status = status
        self.status_name = _L.pp_status_name(status).decode()
        self.message = message or self.status_name
        super().__init__("%s: %s" % (what, self.message) if what else self.message)


def _check(st, what=None):
    if st != 0:
        raise PixpostError(st, _L.pp_error_message().decode(errors="replace"), what)


def version():
    """The library's version (pp_version)."""
    return _L.pp_version().decode()


def _enc(s):
    return s.encode() if isinstance(s, str) else s


def _to_image(arr):
    """A new pp_image holding a copy of arr (2-D frame or 3-D volume) as doubles."""
    a = np.asarray(arr)
    if a.ndim not in (2, 3):
        raise ValueError("pixpost: an image is 2-D (height, width) or 3-D (depth, height, "
                         "width); got shape %s" % (a.shape,))
    d, h, w = (1,) + a.shape if a.ndim == 2 else a.shape
    p = ctypes.POINTER(_lib.Image)()
    _check(_L.pp_image_create3(d, h, w, ctypes.byref(p)))
    dst = np.ctypeslib.as_array(p.contents.data, shape=(d * h * w,))
    dst[:] = np.ascontiguousarray(a, dtype=np.float64).reshape(-1)
    return p


def _view_image(arr):
    """(pointer to a pp_image, owned): a float64 C-contiguous array is lent to
    the library without a copy (a pp_image made here over its buffer, never
    passed to pp_image_free: owned False); any other array is copied."""
    a = np.asarray(arr)
    if a.dtype == np.float64 and a.flags.c_contiguous and a.ndim in (2, 3) and a.size:
        d, h, w = (1,) + a.shape if a.ndim == 2 else a.shape
        im = _lib.Image(width=w, height=h, depth=d,
                        data=a.ctypes.data_as(ctypes.POINTER(ctypes.c_double)))
        im._keep = a
        return ctypes.pointer(im), False
    return _to_image(a), True


def _from_image(p):
    """A numpy copy of a pp_image: (height, width) or (depth, height, width)."""
    if not p:
        return None
    im = p.contents
    shape = (im.height, im.width) if im.depth == 1 else (im.depth, im.height, im.width)
    n = im.depth * im.height * im.width
    return np.ctypeslib.as_array(im.data, shape=(n,)).reshape(shape).copy()


def _parse_psf(spec):
    ps = _lib.PsfSpec()
    _check(_L.pp_psf_parse(_enc(spec), None, ctypes.byref(ps)), "psf")
    return ps


def _parse_noise(spec):
    ns = _lib.NoiseSpec()
    _check(_L.pp_noise_parse(_enc(spec), None, ctypes.byref(ns)), "noise")
    return ns


def _make_psf(spec_struct, size=0, depth=0, volume=False):
    """The kernel of a parsed spec as a new pp_image: 3-D specs (and files for a
    volume) through pp_psf_make3, others through pp_psf_make (as the CLI does)."""
    if _L.pp_psf_is_3d(ctypes.byref(spec_struct)) or (volume and spec_struct.kind == _lib.PP_PSF_FILE) \
            or depth:
        sh = _lib.Shape()
        data = ctypes.POINTER(ctypes.c_double)()
        _check(_L.pp_psf_make3(ctypes.byref(spec_struct), size, depth, ctypes.byref(sh),
                               ctypes.byref(data)), "psf")
        try:
            n = list(sh.n)[:sh.rank]
            shape = n if sh.rank == 3 else [1] + n
            p = _to_image(np.ctypeslib.as_array(data, shape=(int(np.prod(shape)),))
                          .reshape(shape))
        finally:
            _libc.free(data)
        return p
    p = ctypes.POINTER(_lib.Image)()
    _check(_L.pp_psf_make(ctypes.byref(spec_struct), size, ctypes.byref(p)), "psf")
    return p


def psf(spec, shape=None):
    """The kernel of a PSF spec (e.g. "gaussian:sigma=1.6") as a float64 array,
    normalised to sum 1. shape None: the size the model chooses; an int: a
    square kernel of that odd size; (depth, size): a 3-D kernel (pp_psf_make3,
    0 for either: the model's choice)."""
    ps = _parse_psf(spec)
    if shape is None:
        shape = 0
    if isinstance(shape, (tuple, list)):
        depth, size = shape
        p = _make_psf(ps, size, depth, volume=True)
    else:
        p = _make_psf(ps, int(shape))
    try:
        return _from_image(p)
    finally:
        _L.pp_image_free(p)


def _kernel(psf_arg, volume):
    """(pp_image kernel, pp_psf_spec or None) from a spec string or an array."""
    if isinstance(psf_arg, (str, bytes)):
        ps = _parse_psf(psf_arg)
        if not volume and _L.pp_psf_is_3d(ctypes.byref(ps)):
            raise PixpostError(1, "a 3-D PSF blurs a volume; give a 3-D frame or a 2-D PSF",
                               "psf")
        return _make_psf(ps, volume=volume), ps
    return _to_image(psf_arg), None


def simulate(truth, psf="gaussian:sigma=1.5", noise="gaussian:sigma=1", seed=1,
             boundary="pad"):
    """A noisy blurred image of truth (pp_model_simulate: blur by the PSF, then
    noise from stream 0 of seed), float64 of truth's shape."""
    t, owned = _view_image(truth)
    k = None
    out = ctypes.POINTER(_lib.Image)()
    try:
        k, _ = _kernel(psf, t.contents.depth > 1)
        ns = _parse_noise(noise)
        b = ctypes.c_int()
        _check(_L.pp_boundary_parse(_enc(boundary), None, ctypes.byref(b)), "boundary")
        _check(_L.pp_model_simulate(t, k, b.value, ctypes.byref(ns), seed, None,
                                    ctypes.byref(out)), "simulate")
        return _from_image(out)
    finally:
        _L.pp_image_free(out)
        _L.pp_image_free(k)
        if owned:
            _L.pp_image_free(t)


class Result:
    """A finished run. mean, sd, lo, hi, rhat, mcse: float64 arrays of the
    frame's shape (the library's doubles; the CLI's TIFFs hold them as
    float32, so mean.astype(np.float32) equals mean.tif); rhat and mcse are
    None when a half-chain kept fewer than 2 draws. trace: a structured array
    with fields chain, draw and one per trace column (lambda, delta, loglik,
    probe pixels ...). summary: summary.json as a dict. warnings: the
    summary's warnings. outputs: the folder the outputs were written to
    (None when they went to a temporary folder, since removed)."""

    def __repr__(self):
        return "<pixpost.Result %s, %d warnings>" % (self.mean.shape, len(self.warnings))


def _trace_array(tp):
    t = tp.contents
    names = [t.names[i].decode() for i in range(t.ncols)]
    n = t.chains * t.kept
    vals = np.ctypeslib.as_array(t.values, shape=(n * t.ncols,)).reshape(n, t.ncols) \
        if n and t.ncols else np.zeros((n, t.ncols))
    dt = np.dtype([("chain", np.int32), ("draw", np.int64)] + [(c, np.float64) for c in names])
    out = np.zeros(n, dtype=dt)
    out["chain"] = np.repeat(np.arange(t.chains), t.kept)
    out["draw"] = np.tile(np.arange(t.kept), t.chains)
    for j, c in enumerate(names):
        out[c] = vals[:, j]
    return out


def _count(name, v, lo, hi):
    """v as an int in lo..hi; ValueError naming the option otherwise (a C
    unsigned field would silently wrap a negative number)."""
    if isinstance(v, bool) or int(v) != v or not lo <= int(v) <= hi:
        raise ValueError("pixpost: %s=%r: expected a whole number from %d to %d"
                         % (name, v, lo, hi))
    return int(v)


def sample(frame, psf="gaussian:sigma=1.5", noise="gaussian", prior="default", *, seed=1,
           iters=None, burn=None, chains=None, thin=None, boundary="pad", sampler="auto",
           threads=1, level=None, background=None, voxel=None, saturation=True,
           regions=None, progress=None, stop=None, outputs=None):
    """Samples the posterior of frame (a 2-D array, a 3-D array (depth, height,
    width) sampled as one volume, or the path of a PNG/TIFF frame) and
    returns a Result.

    psf, noise, prior: spec strings as `pixpost sample` takes them (psf may
    also be a kernel array); "default" prior: the library's choice. iters
    None: the run picks its length (iters_auto); a number: exactly burn +
    iters iterations per chain (as --iters N). seed, burn, chains, thin,
    boundary, sampler, threads, level, background, voxel ((z, y, x) in
    micrometres) as the command's flags; None keeps the library's default.
    regions: an integer label array of the frame's shape (0 = no region):
    Result.regions is then a dict with "labels" (increasing), "pixels" (per
    region) and "totals", a (chains, draws, regions) array of each kept
    draw's total over each region (as `--regions FILE`; regions.csv's
    summaries are not computed here).
    saturation True censors saturated pixels as the CLI does (the format
    maximum from an integer array's dtype, or a flat top: their value is
    known to be at least the level); "missing" treats them as missing (the
    CLI's --saturated-missing); False uses them as data.
    progress(done, total): called now and then during sampling (from the
    sampling thread, holding the GIL); returning False asks the run to stop.
    stop: an object with is_set() (threading.Event), checked at each
    progress call; a stopped run raises PixpostError (status_name
    "interrupted"). outputs: a folder to write the CLI's output files to
    (mean.tif, summary.json, trace.csv, report.html ...); None: a temporary
    folder, removed once summary.json is read.
    The GIL is released while the library samples."""
    cfg = _lib.SamplerConfig()
    _L.pp_sampler_defaults(ctypes.byref(cfg))
    cfg.noise = _parse_noise(noise)
    if prior not in (None, "default"):
        _check(_L.pp_prior_parse(_enc(prior), None, ctypes.byref(cfg.prior)), "prior")
    b = ctypes.c_int()
    _check(_L.pp_boundary_parse(_enc(boundary), None, ctypes.byref(b)), "boundary")
    cfg.boundary = b.value
    k = ctypes.c_int()
    _check(_L.pp_sampler_kind_parse(_enc(sampler), None, ctypes.byref(k)), "sampler")
    cfg.kind = k.value
    cfg.seed = _count("seed", seed, 0, 2**64 - 1)
    cfg.threads = _count("threads", threads, 0, 4096)
    if iters is not None and iters != "auto":
        cfg.iters = _count("iters", iters, 0, 2**32 - 1)
        cfg.iters_auto = 0
    if burn is not None:
        cfg.burn = _count("burn", burn, 0, 2**32 - 1)
    if chains is not None:
        cfg.chains = _count("chains", chains, 0, 2**32 - 1)
    if thin is not None:
        cfg.thin = _count("thin", thin, 0, 2**32 - 1)
    if level is not None:
        cfg.level = level
    if background is not None:
        cfg.background = background
    if voxel is not None:
        for i in range(3):
            cfg.voxel[i] = voxel[i] if voxel[i] and voxel[i] > 0 else 0.0

    img = ctypes.POINTER(_lib.Image)()
    owned = True
    reg = ctypes.c_void_p()
    kern = None
    s = ctypes.c_void_p()
    res = ctypes.create_string_buffer(_lib.RESULT_BUFFER)
    have_res = False
    tmp = None
    try:
        if isinstance(frame, (str, bytes, os.PathLike)):
            ro = _lib.ReadOptions()
            _L.pp_read_options_defaults(ctypes.byref(ro))
            info = _lib.ReadInfo()
            path = os.fsencode(frame)
            _check(_L.pp_image_read(path, ctypes.byref(ro), ctypes.byref(img),
                                    ctypes.byref(info)))
            bits, is_float = info.bits, info.is_float
            if info.nonfinite:
                raise PixpostError(1, "%s: %d pixels are NaN or infinite" %
                                   (os.fsdecode(frame), info.nonfinite))
        else:
            a = np.asarray(frame)
            if not np.all(np.isfinite(a)):
                raise PixpostError(1, "frame: %d pixels are NaN or infinite" %
                                   int(np.sum(~np.isfinite(a))))
            img, owned = _view_image(a)
            bits, is_float = a.dtype.itemsize * 8, int(a.dtype.kind == "f")
        sat = _lib.Saturation()
        censored = None
        if saturation is not True and saturation not in (False, "missing"):
            raise ValueError("saturation must be True, False or 'missing', not %r" % (saturation,))
        if saturation:
            _L.pp_saturation_find(img, bits, is_float, ctypes.byref(sat))
            if sat.count and not owned:  # marking writes NaN: never into the caller's array
                img, owned = _to_image(a), True
            if sat.count and saturation is True:  # one byte per pixel, 1 = censored
                im = img.contents
                vals = np.ctypeslib.as_array(im.data, shape=(im.width * im.height * im.depth,))
                censored = (vals == sat.level).astype(np.uint8)
                cfg.censored = censored.ctypes.data
                cfg.censor_level = sat.level
            _L.pp_saturation_mark(img, ctypes.byref(sat))
        volume = img.contents.depth > 1
        kern, ps = _kernel(psf, volume)
        if ps is not None:
            cfg.psf = ps

        if regions is not None:
            lab, lab_owned = _view_image(regions)
            try:
                im = img.contents
                _check(_L.pp_regions_plan(lab, im.depth, im.height, im.width,
                                          ctypes.byref(reg)), "regions")
            finally:
                if lab_owned:
                    _L.pp_image_free(lab)
            cfg.regions = reg
        flag = ctypes.c_int(0)
        cfg.stop = ctypes.pointer(flag)
        errors = []

        def on_progress(_ctx, done, total):
            try:
                if progress is not None and progress(int(done), int(total)) is False:
                    flag.value = 1
                if stop is not None and stop.is_set():
                    flag.value = 1
            except BaseException as e:  # an exception cannot cross the C frames: stop
                errors.append(e)
                flag.value = 1

        cb = _lib.PROGRESS_FN(on_progress) if (progress or stop) else _lib.PROGRESS_FN()
        cfg.progress = cb
        _check(_L.pp_sampler_create(ctypes.byref(cfg), img, kern, ctypes.byref(s)))
        st = _L.pp_sampler_run(s)  # the GIL is released here (ctypes.CDLL)
        if errors:
            raise errors[0]
        _check(st)

        r = Result()
        r.mean = _from_image(_L.pp_sampler_mean(s))
        r.sd = _from_image(_L.pp_sampler_sd(s))
        r.lo = _from_image(_L.pp_sampler_lo(s))
        r.hi = _from_image(_L.pp_sampler_hi(s))
        r.rhat = _from_image(_L.pp_sampler_rhat_map(s))
        r.mcse = _from_image(_L.pp_sampler_mcse_map(s))
        r.trace = _trace_array(_L.pp_sampler_trace(s))
        r.regions = None
        if reg:
            cap, stride = ctypes.c_size_t(), ctypes.c_size_t()
            v = _L.pp_sampler_region_draws(s, ctypes.byref(cap), ctypes.byref(stride))
            t = _L.pp_sampler_trace(s).contents
            nreg = _L.pp_regions_count(reg)
            allv = np.ctypeslib.as_array(v, shape=(t.chains * cap.value * stride.value,))
            allv = allv.reshape(t.chains, cap.value, stride.value)
            r.regions = {
                "labels": np.array([_L.pp_regions_label(reg, j) for j in range(nreg)]),
                "pixels": np.array([_L.pp_regions_pixels(reg, j) for j in range(nreg)]),
                "totals": allv[:, :t.kept, :nreg].copy()}
        _check(_L.pp_sampler_result(s, res))
        have_res = True
        if outputs is None:
            tmp = tempfile.mkdtemp(prefix="pixpost-")
            out_dir = tmp
        else:
            os.makedirs(outputs, exist_ok=True)
            out_dir = outputs
        ri = _lib.RunInfo(saturated=sat.count, saturation_level=sat.level,
                          saturation_rule=sat.rule,
                          saturated_as=b"censored" if saturation is True else
                          b"missing" if saturation else b"data")
        if isinstance(frame, (str, bytes, os.PathLike)):
            ri.input_path = os.fsencode(frame)
        for field, spec in (("psf_spec", psf), ("noise_spec", noise), ("prior_spec", prior)):
            if isinstance(spec, (str, bytes)):
                setattr(ri, field, _enc(spec))
        _check(_L.pp_output_write(os.fsencode(out_dir), res, img, ctypes.byref(ri)), "outputs")
        with open(os.path.join(out_dir, "summary.json")) as f:
            r.summary = json.load(f)
        r.warnings = list(r.summary.get("warnings") or [])
        r.outputs = outputs
        return r
    finally:
        if have_res:
            _L.pp_result_free(res)
        _L.pp_sampler_free(s)
        _L.pp_regions_free(reg)
        _L.pp_image_free(kern)
        if owned:
            _L.pp_image_free(img)
        if tmp:
            shutil.rmtree(tmp, ignore_errors=True)
