/* kilter: shielded cables as equivalent conductors.
 *
 * A concentric neutral of k strands on a circle of radius R becomes one
 * conductor with GMR_cn = (GMR_s k R^(k-1))^(1/k) and r_cn = r_s / k; a tape
 * shield becomes one conductor at the radius of the middle of the tape.
 * Distances to other conductors follow the equivalent-conductor method of
 * W. H. Kersting, "Distribution System Modeling and Analysis", ch. 4
 * (concentric-neutral and tape-shielded cables). */
#include <math.h>
#include "kilter/lines.h"
#include "kilter/units.h"


/* Product of the distances from a point at distance d from the centre to k
 * points equally spaced on a circle of radius R, one of them towards the
 * point, is d^k - R^k; its k-th root is the GMD.  Written as
 * d (1 - (R/d)^k)^(1/k) so that large k does not overflow. */
static double ring_to_point(double d, double R, int k)
{
    if (d == 0)
        return R; /* the ring around its own phase conductor */
    if (!(d > R))
        return 0; /* the point is inside or on the ring: overlapping cables */
    if (k == 0)
        return d; /* a continuous tube: the GMD from an outside point is the centre distance */
    return d * pow(1.0 - pow(R / d, k), 1.0 / k);
}

double kl_wire_gmd(const kl_wire *a, const kl_wire *b)
{
    double d = hypot(a->x_m - b->x_m, a->y_m - b->y_m);
    if (a->ring_m > 0 && b->ring_m > 0)
        return d; /* ring to ring: centre distance (Kersting, concentric neutrals) */
    if (a->ring_m > 0)
        return ring_to_point(d, a->ring_m, a->strands);
    if (b->ring_m > 0)
        return ring_to_point(d, b->ring_m, b->strands);
    return d;
}

kl_status kl_cable_concentric_ring(double r_strand_ohm_per_m, double gmr_strand_m,
                                   double d_strand_m, int k, double d_over_neutral_m,
                                   kl_wire *ring)
{
    double R = (d_over_neutral_m - d_strand_m) / 2.0;
    if (k < 1 || !(gmr_strand_m > 0) || !(R > 0) || !(r_strand_ohm_per_m >= 0))
        return KL_EARG;
    ring->ring_m = R;
    ring->strands = k;
    ring->gmr_m = pow(gmr_strand_m * k * pow(R, k - 1), 1.0 / k);
    ring->r_ohm_per_m = r_strand_ohm_per_m / k;
    ring->radius_m = d_over_neutral_m / 2.0;
    return KL_OK;
}

/* Tape area taken as pi d_s T with d_s the outside diameter, as in the
 * published method (its r_shield = 18.826 / (d_s T) ohm/mile, d_s in inches,
 * T in mils, is this with rho = 2.3715e-8 ohm-m). */
kl_status kl_cable_tape_ring(double rho_ohm_m, double d_tape_m, double t_m,
                             kl_wire *ring)
{
    if (!(rho_ohm_m > 0) || !(t_m > 0) || !(d_tape_m > 2.0 * t_m))
        return KL_EARG;
    ring->ring_m = (d_tape_m - t_m) / 2.0;
    ring->strands = 0;
    ring->gmr_m = ring->ring_m;
    ring->r_ohm_per_m = rho_ohm_m / (KL_PI * d_tape_m * t_m);
    ring->radius_m = d_tape_m / 2.0;
    return KL_OK;
}
