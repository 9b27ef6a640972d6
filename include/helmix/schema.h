/* helmix/schema.h — the layout of a helmix file, declared once: group and dataset paths and
 * the attribute names of the /helmix provenance group. The writer (io, make) and the reader
 * (cube, inspect) both use these names, so the two cannot drift apart. */
#ifndef HELMIX_SCHEMA_H
#define HELMIX_SCHEMA_H

#include <stdio.h>

/* Grid Data Format groups (the layout yt's GDF reader expects) */
#define HX_SCHEMA_GRID "/data/grid_0000000000"      /* the one level-0 grid               */
#define HX_SCHEMA_FIELD_TYPES "/field_types"        /* per field: name, units, staggering  */
#define HX_SCHEMA_SIMULATION "/simulation_parameters"
#define HX_SCHEMA_UNITS "/dataset_units"            /* code units: value + "unit" attribute */
#define HX_SCHEMA_GDF "/gridded_data_format"

/* helmix groups */
#define HX_SCHEMA_PROVENANCE "/helmix"              /* the request, what was realized, timings */
#define HX_SCHEMA_DIAGNOSTICS "/helmix/diagnostics" /* the summary inspect measures            */
#define HX_SCHEMA_STATE "/helmix/state"             /* the physical state: units, gas, cloud   */

/* field names */
#define HX_FIELD_VELOCITY "velocity"
#define HX_FIELD_DENSITY "density"
#define HX_FIELD_SOLENOIDAL "velocity_solenoidal"   /* [output] parts: the two parts of v */
#define HX_FIELD_COMPRESSIVE "velocity_compressive"
#define HX_FIELD_MAGNETIC "magnetic"           /* cell-centred B, code_magnetic            */
#define HX_FIELD_MAGNETIC_FACE "magnetic_face" /* B on the low faces of a staggered grid    */

/* attributes of /helmix that inspect reads back */
#define HX_ATTR_VRMS "vrms"
#define HX_ATTR_RECIPE "recipe"     /* the recipe as run: its presence marks a helmix file */
#define HX_ATTR_MIX_MODE "mix_mode" /* "zeta" or "compressive_fraction"                   */
#define HX_ATTR_ZETA "zeta"         /* NAN when the mix was asked as a compressive_fraction */
#define HX_ATTR_COMPUTE "compute_precision" /* precision of the synthesis: single or double */
#define HX_ATTR_EXACT "exact"
#define HX_ATTR_AMPLITUDES "amplitudes"
#define HX_ATTR_FRACTION_TARGET "compressive_fraction_target"
#define HX_ATTR_FRACTION_REALIZED "realized_compressive_fraction"
#define HX_ATTR_FRACTION_EXPECTED "expected_compressive_fraction"
#define HX_ATTR_SHAPE "spectrum_shape"
#define HX_ATTR_SLOPE "slope"
#define HX_ATTR_SLOPE_FIT "slope_fit_expected"
#define HX_ATTR_SLOPE_SIGMA "slope_fit_sigma"
#define HX_ATTR_KMIN "kmin"
#define HX_ATTR_KMAX "kmax"
#define HX_ATTR_WEIGHT "mix_weight" /* "volume": share of v; "mass": share of sqrt(rho) v */
#define HX_ATTR_FRACTION_OF "fraction_of" /* "synthesis", or "written": shaped after synthesis */

/* attributes of /helmix/state that inspect reads back (code units; NAN where not asked) */
#define HX_STATE_SOUND_SPEED "sound_speed"
#define HX_STATE_G "G_code"
#define HX_STATE_AMPLITUDE_BY "amplitude_by"       /* "vrms", "mach", "virial" or "linewidth" */
#define HX_STATE_VRMS_ASKED "vrms_asked"
#define HX_STATE_MACH_ASKED "mach_asked"
#define HX_STATE_VIRIAL_ASKED "virial_asked"
#define HX_STATE_SIGMA_3D_ASKED "sigma_3d_asked"
#define HX_STATE_VRMS "vrms"                       /* realized, as make measured them */
#define HX_STATE_SIGMA_3D "sigma_3d"
#define HX_STATE_MACH "mach"
#define HX_STATE_VIRIAL "virial"
#define HX_STATE_MOMENTUM "momentum"
#define HX_STATE_MOMENTUM_RELATIVE "momentum_relative"
#define HX_STATE_FLAGS "window_bulk_rotation"      /* three 0/1 integers */
#define HX_STATE_DENSITY_MODEL "density_model"
#define HX_STATE_DENSITY_MEAN "density_mean"
#define HX_STATE_SIGMA_S_ASKED "sigma_s_asked"
#define HX_STATE_SIGMA_S "sigma_s"
#define HX_STATE_CLOUD "cloud"
#define HX_STATE_CLOUD_CENTER "cloud_center"
#define HX_STATE_CLOUD_RADIUS "cloud_radius"
#define HX_STATE_REGION_MASS "region_mass"
#define HX_STATE_GAMMA "gamma"
#define HX_STATE_MAGNETIC_B0 "magnetic_b0"                 /* three components, the uniform field */
#define HX_STATE_MAGNETIC_RANDOM_RMS "magnetic_random_rms" /* asked rms of the random part        */
#define HX_STATE_MAGNETIC_RMS "magnetic_rms"               /* rms |B|, cell-centred, as written   */
#define HX_STATE_MAGNETIC_FACE_RMS "magnetic_face_rms"
#define HX_STATE_BETA "beta"                               /* of the uniform field, as made       */
#define HX_STATE_ALFVEN_MACH "alfven_mach"
#define HX_STATE_BETA_ASKED "beta_asked"
#define HX_STATE_ALFVEN_MACH_ASKED "alfven_mach_asked"
#define HX_STATE_UNIT_MAGNETIC "unit_magnetic_gauss"

/* datasets of /dataset_units (Grid Data Format): a scalar value with a "unit" attribute */
#define HX_UNITS_VELOCITY "velocity_unit"   /* cm/s  */
#define HX_UNITS_MAGNETIC "magnetic_unit"   /* gauss */

/* Dataset name of component c of a field with ncomp components: "velocity_x", or "density". */
static inline void hx_schema_component(char *buf, size_t n, const char *field, int ncomp, int c)
{
    if (ncomp == 1) snprintf(buf, n, "%s", field);
    else snprintf(buf, n, "%s_%c", field, "xyz"[c]);
}

/* Full path of that dataset inside the grid group. */
static inline void hx_schema_dataset(char *buf, size_t n, const char *field, int ncomp, int c)
{
    char name[64];
    hx_schema_component(name, sizeof name, field, ncomp, c);
    snprintf(buf, n, HX_SCHEMA_GRID "/%s", name);
}

#endif
