/* pixpost — Bayesian deconvolution with uncertainty, by MCMC. One include. */
#ifndef PIXPOST_H
#define PIXPOST_H
#include "pixpost/status.h"
#include "pixpost/shape.h"
#include "pixpost/image.h"
#include "pixpost/io.h"
#include "pixpost/ome.h"
#include "pixpost/stack.h"
#include "pixpost/rng.h"
#include "pixpost/fft.h"
#include "pixpost/spec.h"
#include "pixpost/psf.h"
#include "pixpost/noise.h"
#include "pixpost/prior.h"
#include "pixpost/model.h"
#include "pixpost/sampler.h"
#include "pixpost/result.h"
#include "pixpost/saturation.h"
#include "pixpost/datacheck.h"
#include "pixpost/ppcheck.h"
#include "pixpost/calib.h"
#define PP_VERSION_STRING "0.1.0"
#endif
