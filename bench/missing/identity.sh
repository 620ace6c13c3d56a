#!/bin/bash
# Byte-identity of two pixpost binaries on frames without masked or
# saturated pixels (the missing-data change must not move a bit):
#   bench/missing/identity.sh OLD_BINARY NEW_BINARY [WORKDIR]
# 64 x 64 crops of images/demo_*.tif (float, so no saturation rule fires),
# 14 runs: gibbs periodic/pad (gmrf1), adaptive pad/periodic, mtc
# periodic/pad, hmc camera (matern, adaptive), pcn poisson, gpcn camera
# periodic, pcn gaussian, gibbs sigma=auto, and --iters auto (rounds, 4
# chains on 1 thread: park stores) for gibbs pad and hmc camera. Compares
# mean/sd/lo/hi/rhat/mcse.tif and trace.csv with cmp; exit 1 on a difference.
set -e
OLD=$1; NEW=$2; W=${3:-$(mktemp -d)}; mkdir -p $W
HERE=$(cd "$(dirname "$0")/../.." && pwd)
/usr/bin/python3 -c "
import tifffile, numpy as np
for n in ('gaussian', 'photons'):
    a = tifffile.imread('$HERE/images/demo_%s.tif' % n)[40:104, 60:124].astype(np.float32)
    tifffile.imwrite('$W/%s.tif' % n[0], a)"
runs() {
B=$1; O=$2; mkdir -p $O
C="--iters 200 --burn 100 --chains 2 --threads 1 --seed 7 --quiet --overwrite"
A="--iters auto --max-iters 1400 --burn 100 --chains 4 --threads 1 --seed 7 --quiet --overwrite"
CAM="--noise camera:gain=1,offset=100,read=1.6"
G="$W/g.tif --psf gaussian:sigma=1.5"; P="$W/p.tif --psf gaussian:sigma=1.5"
$B sample $G --prior gmrf1 --sampler gibbs --boundary periodic $C -o $O/gibbs_per
$B sample $G --prior gmrf1 --sampler gibbs --boundary pad $C -o $O/gibbs_pad
$B sample $G $C -o $O/adaptive_pad
$B sample $G --boundary periodic $C -o $O/adaptive_per
$B sample $G --prior gmrf1 --sampler mtc --boundary periodic $C -o $O/mtc_per
$B sample $G --prior gmrf1 --sampler mtc --boundary pad $C -o $O/mtc_pad
$B sample $P $CAM --sampler hmc $C -o $O/hmc_camera
$B sample $P $CAM --prior adaptive --sampler hmc $C -o $O/hmc_adaptive
$B sample $P --noise poisson:gain=1,offset=100 --sampler pcn --prior gmrf1 $C -o $O/pcn_poisson
$B sample $P $CAM --sampler gpcn --prior gmrf1 --boundary periodic $C -o $O/gpcn_camera_per
$B sample $G --sampler pcn --prior gmrf1 $C -o $O/pcn_gauss
$B sample $W/g.tif --psf gaussian:sigma=auto --prior gmrf1 --sampler gibbs $C -o $O/gibbs_width
$B sample $G --prior gmrf1 --sampler gibbs $A -o $O/auto_gibbs_pad
$B sample $P $CAM $A -o $O/auto_hmc_camera
}
runs "$OLD" $W/old
runs "$NEW" $W/new
bad=0
for d in $W/old/*/; do n=$(basename $d)
  for f in mean.tif sd.tif lo.tif hi.tif rhat.tif mcse.tif trace.csv; do
    cmp -s $d/$f $W/new/$n/$f || { echo "DIFF $n/$f"; bad=1; }
  done
  echo "$n: 7 files identical"
done
exit $bad
