/* Model files beyond pwl.h's sw_pwl_save/sw_pwl_load: loading that also
 * hands back the units written in the file's header, and saving and loading
 * with the fit's provenance (pwl_prov.h). */
#ifndef SW_PWL_IO_H
#define SW_PWL_IO_H

#include <stddef.h>
#include "pwl/pwl.h"
#include "pwl/pwl_prov.h"


/* Longest unit text kept by sw_pwl_load_units (bytes, with the NUL). */
#define SW_UNIT_MAX 64

/* Like sw_pwl_load; xunit and yunit (each SW_UNIT_MAX bytes, may be NULL)
 * receive the units named in the header, "" when none. */
int sw_pwl_load_units(sw_pwl *m, const char *path, char *xunit, char *yunit,
                      sw_err *err);

/* Like sw_pwl_save, with the fit's provenance (NULL: none) as "# fit"
 * comment lines; a provenance sw_pwl_prov_check refuses is not written. */
int sw_pwl_save_prov(const sw_pwl *m, const char *path, const char *xunit,
                     const char *yunit, const sw_pwl_prov *prov, sw_err *err);

/* Like sw_pwl_load_units; prov (may be NULL) receives the provenance, with
 * prov->present 0 when the file states none.  Bad provenance lines are
 * errors naming path:line even when prov is NULL. */
int sw_pwl_load_prov(sw_pwl *m, const char *path, char *xunit, char *yunit,
                     sw_pwl_prov *prov, sw_err *err);

#endif
