/* Tests of the buses' places on Earth (src/model/geo.c, src/io/loader_coordinates.c):
 * PROJ's conversions through kl_geo_transform on a published worked example and
 * back, the geodesic distance against the WGS 84 ellipsoid's own figures, a
 * feeder's coordinates in each system to longitude and latitude, the
 * length-against-distance warning, and the loader's located messages. */
#include <check.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/feeder.h"
#include "kilter/geo.h"
#include "kl_base.h"

/* IOGP Publication 373-7-2 (EPSG Guidance Note 7-2), Transverse Mercator worked
 * example, OSGB 1936 / British National Grid: latitude 50d30'00"N, longitude
 * 00d30'00"E -> easting 577274.99 m, northing 69740.49 m (from memory).  The
 * published figures have two decimals: 1 cm tolerance. */
START_TEST(published_transverse_mercator_example_and_back)
{
    double x = 0.5, y = 50.5; /* x east (longitude), y north (latitude) */
    kl_errors err;
    kl_errors_init(&err);
    ck_assert_int_eq(kl_geo_transform("EPSG:4277", "EPSG:27700", &x, &y, 1, &err), KL_OK);
    ck_assert_double_eq_tol(x, 577274.99, 0.01);
    ck_assert_double_eq_tol(y, 69740.49, 0.01);
    /* and back: the round trip returns the point to 1e-9 degree (0.1 mm) */
    ck_assert_int_eq(kl_geo_transform("EPSG:27700", "EPSG:4277", &x, &y, 1, &err), KL_OK);
    ck_assert_double_eq_tol(x, 0.5, 1e-9);
    ck_assert_double_eq_tol(y, 50.5, 1e-9);
    kl_errors_free(&err);
}
END_TEST

/* An unknown system is an error with PROJ's reason, not a crash or a print. */
START_TEST(unknown_system_is_an_error)
{
    double x = 1, y = 1;
    kl_errors err;
    kl_errors_init(&err);
    ck_assert_int_eq(kl_geo_transform("EPSG:1", "OGC:CRS84", &x, &y, 1, &err), KL_EINPUT);
    ck_assert_int_eq(err.count, 1);
    ck_assert_ptr_nonnull(strstr(err.items[0].message, "EPSG:1"));
    kl_errors_free(&err);
}
END_TEST

/* WGS 84 (NIMA TR8350.2: a = 6378137 m, 1/f = 298.257223563): one degree along
 * the equator is pi a / 180 = 111319.4908 m; the quarter meridian, equator to
 * pole, 10001965.729 m (from memory). */
START_TEST(geodesic_distances_on_wgs84)
{
    ck_assert_double_eq_tol(kl_geo_distance_m(0, 0, 1, 0), 3.14159265358979323846 * 6378137.0 / 180.0, 1e-4);
    ck_assert_double_eq_tol(kl_geo_distance_m(0, 0, 0, 90), 10001965.729, 1e-3);
    ck_assert(isnan(kl_geo_distance_m(NAN, 0, 1, 0)));
}
END_TEST

#define FEEDER(coords, buses, sections)                                                          \
    "kilter-feeder: 1\nname: t\n" coords                                                         \
    "source: {bus: s, nominal_voltage: 12.47 kV}\n"                                              \
    "conductors:\n"                                                                              \
    "  - {name: c1, resistance: 0.3 ohm/mi, gmr: 0.01 ft, diameter: 0.5 in, ampacity: 300 A}\n"  \
    "layouts:\n"                                                                                 \
    "  - {name: l1, positions: [{id: \"1\", x: 0 ft, height: 28 ft}]}\n"                         \
    "constructions:\n"                                                                           \
    "  - {name: k1, layout: l1, phase_conductor: c1, phases: {a: \"1\"}}\n"                      \
    "buses:\n" buses "sections:\n" sections

static kl_feeder *load(const char *text, kl_errors *err)
{
    kl_feeder *f = NULL;
    kl_errors_clear(err);
    kl_feeder_load_buffer(text, strlen(text), "t.yaml", &f, err);
    return f;
}

/* UTM (WGS 84 / UTM zone 31N, EPSG:32631): false easting 500000 m on the zone's
 * central meridian, 3 deg E, and northing 0 on the equator (the projection's
 * definition: common practice). */
START_TEST(epsg_system_to_lonlat)
{
    kl_errors err;
    kl_errors_init(&err);
    kl_feeder *f = load(FEEDER("coordinates: {system: \"EPSG:32631\"}\n",
                               "  - {name: s, x: 500000, y: 0}\n  - {name: b, x: 500000, y: 1000}\n",
                               "  - {from: s, to: b, length: 1000 m, construction: k1}\n"), &err);
    ck_assert_ptr_nonnull(f);
    double lon[3], lat[3], dist[2];
    ck_assert_int_eq(kl_geo_lonlat(f, lon, lat, &err), KL_OK);
    ck_assert_double_eq_tol(lon[0], 3.0, 1e-9);
    ck_assert_double_eq_tol(lat[0], 0.0, 1e-9);
    ck_assert_double_eq_tol(lon[1], 3.0, 1e-9);
    /* 1000 m of grid north on the central meridian is 1000 m / 0.9996 on the
     * ground (UTM's scale factor there, common practice) */
    kl_geo_section_distances(f, lon, lat, dist);
    ck_assert_double_eq_tol(dist[0], 1000.0 / 0.9996, 1e-3);
    ck_assert_int_eq(kl_geo_check_lengths(f, dist, &err), 0);
    kl_feeder_free(f);
    kl_errors_free(&err);
}
END_TEST

/* A local plane in feet about an origin: the origin itself, and a bus 3280.84 ft
 * (1000 m) east lies 1000 m away, due east (the azimuthal equidistant plane
 * keeps distance and direction from its centre). */
START_TEST(local_plane_to_lonlat)
{
    kl_errors err;
    kl_errors_init(&err);
    kl_feeder *f = load(FEEDER("coordinates: {system: local, longitude: -131.27 deg, latitude: 45.38 deg, unit: ft}\n",
                               "  - {name: s, x: 0, y: 0}\n  - {name: b, x: 3280.839895, y: 0}\n"
                               "  - {name: c, x: 3280.839895, y: 3280.839895}\n",
                               "  - {from: s, to: b, length: 1000 m, construction: k1}\n"
                               "  - {name: short, from: b, to: c, length: 850 m, construction: k1}\n"), &err);
    ck_assert_ptr_nonnull(f);
    double lon[4], lat[4], dist[3];
    ck_assert_int_eq(kl_geo_lonlat(f, lon, lat, &err), KL_OK);
    ck_assert_double_eq_tol(lon[0], -131.27, 1e-12);
    ck_assert_double_eq_tol(lat[0], 45.38, 1e-12);
    ck_assert_double_eq_tol(kl_geo_distance_m(lon[0], lat[0], lon[1], lat[1]), 1000.0, 1e-3);
    ck_assert(lon[1] > lon[0]);
    /* the plane's own distances; the 850 m section spans 1000 m: one warning,
     * at the section, naming both figures */
    kl_geo_section_distances(f, NULL, NULL, dist);
    ck_assert_double_eq_tol(dist[1], 1000.0, 1e-5);
    ck_assert_int_eq(kl_geo_check_lengths(f, dist, &err), 1);
    ck_assert_str_eq(err.items[0].element, "section \"short\"");
    ck_assert_int_eq(err.items[0].line, 17);
    ck_assert_ptr_nonnull(strstr(err.items[0].message, "length 850 m is 85 %"));
    ck_assert_ptr_nonnull(strstr(err.items[0].message, "1000 m"));
    kl_feeder_free(f);
    kl_errors_free(&err);
}
END_TEST

/* Plot units are no place: converting says how to state one. */
START_TEST(plot_units_do_not_convert)
{
    kl_errors err;
    kl_errors_init(&err);
    kl_feeder *f = load(FEEDER("", "  - {name: s, x: 0, y: 0}\n",
                               "  - {from: s, to: b, length: 1000 m, construction: k1}\n"), &err);
    ck_assert_ptr_nonnull(f);
    double lon[3], lat[3];
    ck_assert_int_eq(kl_geo_lonlat(f, lon, lat, &err), KL_EINPUT);
    ck_assert_ptr_nonnull(strstr(err.items[0].message, "'coordinates'"));
    kl_feeder_free(f);
    kl_errors_free(&err);
}
END_TEST

/* The loader's messages: each located at the key, saying what is expected. */
START_TEST(loader_messages)
{
    kl_errors err;
    kl_errors_init(&err);
    ck_assert_ptr_null(load(FEEDER("coordinates: {system: WGS84}\n", "  - {name: s, x: 0, y: 0}\n",
                                   "  - {from: s, to: b, length: 10 m, construction: k1}\n"), &err));
    ck_assert_int_eq(err.items[0].line, 3);
    ck_assert_ptr_nonnull(strstr(err.items[0].message, "expected lon/lat"));
    ck_assert_ptr_null(load(FEEDER("coordinates: {system: local, longitude: -131 deg}\n",
                                   "  - {name: s, x: 0, y: 0}\n",
                                   "  - {from: s, to: b, length: 10 m, construction: k1}\n"), &err));
    ck_assert_ptr_nonnull(strstr(err.items[0].message, "needs the origin"));
    ck_assert_ptr_null(load(FEEDER("coordinates: {system: local, longitude: -131 deg, latitude: 95 deg}\n",
                                   "  - {name: s, x: 0, y: 0}\n",
                                   "  - {from: s, to: b, length: 10 m, construction: k1}\n"), &err));
    ck_assert_ptr_nonnull(strstr(err.items[0].message, "'latitude' is 95 deg"));
    /* lon/lat with the two swapped: the bus's own line, and the hint */
    ck_assert_ptr_null(load(FEEDER("coordinates: {system: lon/lat}\n",
                                   "  - {name: s, x: 45.38, y: -131.27}\n",
                                   "  - {from: s, to: b, length: 10 m, construction: k1}\n"), &err));
    ck_assert_int_eq(err.items[0].line, 12);
    ck_assert_str_eq(err.items[0].element, "bus \"s\"");
    ck_assert_ptr_nonnull(strstr(err.items[0].message, "swapped"));
    ck_assert_ptr_null(load(FEEDER("coordinates: {system: \"EPSG:32631\", unit: ft}\n",
                                   "  - {name: s, x: 0, y: 0}\n",
                                   "  - {from: s, to: b, length: 10 m, construction: k1}\n"), &err));
    ck_assert_ptr_nonnull(strstr(err.items[0].message, "belong to 'system: local'"));
    kl_errors_free(&err);
}
END_TEST

/* An EPSG code PROJ's database does not hold: KL_EINPUT at the coordinates. */
START_TEST(unknown_epsg_code_located)
{
    kl_errors err;
    kl_errors_init(&err);
    kl_feeder *f = load(FEEDER("coordinates: {system: \"EPSG:99999999\"}\n", "  - {name: s, x: 0, y: 0}\n",
                               "  - {from: s, to: b, length: 10 m, construction: k1}\n"), &err);
    ck_assert_ptr_nonnull(f);
    double lon[3], lat[3];
    ck_assert_int_eq(kl_geo_lonlat(f, lon, lat, &err), KL_EINPUT);
    ck_assert_int_eq(err.items[0].line, 3);
    ck_assert_str_eq(err.items[0].element, "coordinates");
    kl_feeder_free(f);
    kl_errors_free(&err);
}
END_TEST

/* Every allocation of the conversion failing in turn: KL_ENOMEM, whatever
 * room the caller's record has. */
START_TEST(allocation_failures)
{
    kl_errors err;
    kl_errors_init(&err);
    kl_feeder *f = load(FEEDER("coordinates: {system: \"EPSG:32631\"}\n",
                               "  - {name: s, x: 500000, y: 0}\n  - {name: b, x: 500000, y: 1000}\n",
                               "  - {from: s, to: b, length: 1000 m, construction: k1}\n"), &err);
    ck_assert_ptr_nonnull(f);
    double lon[3], lat[3];
    long n0 = kl_alloc_count();
    ck_assert_int_eq(kl_geo_lonlat(f, lon, lat, &err), KL_OK);
    long total = kl_alloc_count() - n0;
    ck_assert_int_ge(total, 3); /* the loop below tries each of them */
    kl_errors_add(&err, NULL, 0, 0, NULL, "room");
    for (long n = 0; n < total; n++) {
        kl_errors_clear(&err);
        kl_alloc_fail_after(n);
        kl_status st = kl_geo_lonlat(f, lon, lat, &err);
        kl_alloc_fail_after(-1);
        ck_assert_msg(st == KL_ENOMEM, "allocation %ld of %ld failed but status %d", n, total, (int)st);
    }
    kl_feeder_free(f);
    kl_errors_free(&err);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("geo");
    TCase *tc = tcase_create("geo");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, published_transverse_mercator_example_and_back);
    tcase_add_test(tc, unknown_system_is_an_error);
    tcase_add_test(tc, geodesic_distances_on_wgs84);
    tcase_add_test(tc, epsg_system_to_lonlat);
    tcase_add_test(tc, local_plane_to_lonlat);
    tcase_add_test(tc, plot_units_do_not_convert);
    tcase_add_test(tc, loader_messages);
    tcase_add_test(tc, unknown_epsg_code_located);
    tcase_add_test(tc, allocation_failures);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
