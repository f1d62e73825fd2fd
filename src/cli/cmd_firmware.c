/* cmd_firmware.c - `rigmat firmware FILE --rate F -o DIR`: DIR/NAME.h and
 * DIR/NAME.c, C99 for a microcontroller (src/emit/firmware.h; README.md,
 * "Firmware").
 *
 * The model is linearized at its operating point, sampled by ZOH at the
 * rate, given its noise model and its steady-state Kalman filter, exactly
 * as `gains` does; the generator then writes both files into memory, and
 * only when both are complete are they written to DIR, whole or not at
 * all (cli_outfile_write_all, src/cli/outfile.h): DIR holds both new files
 * or neither.  Standard output gets one line naming the files and the
 * operation counts.
 */
#include "cli.h"
#include "outfile.h"
#include "affine.h"
#include "discretize.h"
#include "firmware.h"
#include "gains.h"
#include "noise.h"
#include "reentrant.h"
#include "units.h"

#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <gsl/gsl_matrix.h>

static const char *const firmware_usage[] = {
    "rigmat firmware FILE (--rate FREQ | --period TIME) -o DIR [--name NAME]",
    "             [--ctype double|float] [--set PATH=VALUE]... [--catalog DIR]",
    "writes DIR/NAME.h and DIR/NAME.c (NAME: --name, else the model's name)", NULL
};

static const char *const firmware_formats[] = { "c", NULL };

/* Make the folder path and the missing folders above it (as mkdir -p);
 * 0 on success, -1 with errno set. */
static int make_folders(const char *path)
{
    char *p = malloc(strlen(path) + 1), *s;
    int rc = 0;

    if (p == NULL) {
        errno = ENOMEM;
        return -1;
    }
    strcpy(p, path);
    for (s = p + 1; rc == 0; s++) {
        const char c = *s;
        if (c != '/' && c != '\0')
            continue;
        *s = '\0';
        if (mkdir(p, 0777) != 0 && errno != EEXIST)
            rc = -1;
        *s = c;
        if (c == '\0')
            break;
    }
    free(p);
    return rc;
}

rigmat_status cmd_firmware(int argc, char **argv, struct cli_env *env);
rigmat_status cmd_firmware(int argc, char **argv, struct cli_env *env)
{
    struct cli_common c;
    const char *rate = NULL, *period = NULL;
    const struct cli_opt opts[] = {
        { 0, "rate", CLI_OPT_STRING, &rate, "FREQ", "sample rate of the filters (200Hz)" },
        { 0, "period", CLI_OPT_STRING, &period, "TIME", "or its period (5ms)" },
        { 'o', "output", CLI_OPT_STRING, NULL, "DIR",
          "folder for NAME.h and NAME.c (made when missing), both written or neither" },
        { 0, "name", CLI_OPT_STRING, &c.name, "NAME",
          "prefix of the identifiers and the file names (default: the model's name)" },
        { 0, "ctype", CLI_OPT_STRING, &c.ctype, "TYPE", "double (default) or float" },
        { 0, "set", CLI_OPT_LIST, &c.sets, "PATH=VALUE",
          "override a model value, with units (repeatable)" },
        { 0, "catalog", CLI_OPT_STRING, &c.catalog, "DIR", "look for catalog parts in DIR first" },
        { 'h', "help", CLI_OPT_FLAG, &c.help, NULL, "show this help" },
        CLI_OPT_END_ROW
    };
    rigmat_discretize_opts o = rigmat_discretize_opts_default();
    const rigmat_noise_opts no = rigmat_noise_opts_default();
    const rigmat_riccati_opts ro = rigmat_riccati_opts_default();
    rigmat_model *m = NULL;
    rigmat_lti *lti = NULL;
    rigmat_dlti *d = NULL;
    rigmat_noise *nz = NULL;
    rigmat_discretize_ws *dw = NULL;
    rigmat_noise_ws *nw = NULL;
    rigmat_gains_ws *gw = NULL;
    rigmat_riccati_ws *kw = NULL;
    rigmat_kalman *kf = NULL;
    gsl_vector *fd = NULL;
    rigmat_riccati_info info;
    rigmat_fw_input in;
    rigmat_fw_counts cn;
    rigmat_emit_opts eo;
    rigmat_error e;
    const char *file = NULL, *dir;
    char name[64], source[512], *hbuf = NULL, *cbuf = NULL, *hpath = NULL, *cpath = NULL;
    size_t hlen = 0, clen = 0;
    FILE *hf = NULL, *cf = NULL;
    int done = 0, fmt;
    double v;
    rigmat_status st;
    struct stat sb;

    memset(&c, 0, sizeof c);
    memset(&e, 0, sizeof e);
    memset(&in, 0, sizeof in);
    memset(&eo, 0, sizeof eo);
    c.format = "c"; /* --name and --ctype apply */
    st = cli_model_command(argc, argv, opts, firmware_usage, firmware_formats, env, &c, &file,
            &fmt, &done);
    if (st != RIGMAT_OK || done)
        return st;
    dir = env->output;
    if (dir == NULL || strcmp(dir, "-") == 0) {
        fprintf(env->err, "rigmat firmware: missing -o DIR (the folder for the two files)\n");
        cli_usage(env->err, firmware_usage, opts);
        return RIGMAT_EUSAGE;
    }
    env->output = NULL; /* this command writes its files itself */
    if ((rate == NULL) == (period == NULL)) {
        fprintf(env->err, "rigmat firmware: %s\n",
                rate == NULL ? "missing --rate or --period" : "give --rate or --period, not both");
        cli_usage(env->err, firmware_usage, opts);
        return RIGMAT_EUSAGE;
    }
    st = rate != NULL ? cli_quantity(env, "rate", rate, RIGMAT_Q_FREQUENCY, &v)
                      : cli_quantity(env, "period", period, RIGMAT_Q_TIME, &v);
    if (st != RIGMAT_OK)
        return st;
    if (!(v > 0) || !isfinite(v)) {
        fprintf(env->err, "rigmat firmware: --%s must be positive\n", rate ? "rate" : "period");
        return RIGMAT_EUSAGE;
    }
    o.period_s = rate != NULL ? 1.0 / v : v;
    o.method = RIGMAT_METHOD_ZOH;
    env->opt.rate_hz = 1.0 / o.period_s;
    st = cli_load_model(env, file, &c, &m);
    if (st != RIGMAT_OK)
        return st;
    rigmat_firmware_name(m, c.name, name, sizeof name);
    hpath = malloc(strlen(dir) + strlen(name) + 4);
    cpath = malloc(strlen(dir) + strlen(name) + 4);
    if (hpath == NULL || cpath == NULL) {
        st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
        goto report;
    }
    sprintf(hpath, "%s/%s.h", dir, name);
    sprintf(cpath, "%s/%s.c", dir, name);
    if (cli_output_guard(env, hpath) != RIGMAT_OK || cli_output_guard(env, cpath) != RIGMAT_OK) {
        st = RIGMAT_EUSAGE;
        goto done;
    }
    st = rigmat_firmware_fits(m, &e);
    if (st != RIGMAT_OK)
        goto report;
    st = cli_linearize(env, m, &lti);
    if (st != RIGMAT_OK)
        goto done;
    if (lti->nx == 0) {
        st = RIGMAT_FAIL(&e, RIGMAT_EUSAGE, "the model has no states: no firmware to write");
        goto report;
    }
    dw = rigmat_discretize_ws_alloc(lti->nx, lti->nu, lti->ny);
    nw = rigmat_noise_ws_alloc(lti->nx, lti->nu - lti->nu_control);
    fd = gsl_vector_calloc(lti->nx);
    if (dw == NULL || nw == NULL || fd == NULL) {
        st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
        goto report;
    }
    st = rigmat_discretize(lti, &o, dw, &d, &e);
    if (st == RIGMAT_OK)
        st = rigmat_noise_build(lti, d, &no, nw, &nz, &e);
    if (st == RIGMAT_OK)
        st = rigmat_discretize_affine(lti, &o, d, fd, &e);
    if (st != RIGMAT_OK)
        goto report;
    if (d->ny > 0) {
        gw = rigmat_gains_ws_alloc(d->nx, d->ny);
        kw = rigmat_riccati_ws_alloc(d->nx, d->ny);
        if (gw == NULL || kw == NULL) {
            st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
            goto report;
        }
        st = rigmat_kalman_solve(d->Ad, d->Cd, nz->Qd, nz->Rd, nz->S, &ro, gw, kw, &kf, &info, &e);
        if (st == RIGMAT_ENUMERIC) {
            /* no steady-state filter exists (a mode on the unit circle
             * without noise, an undetectable mode): the model and its
             * Jacobians are still worth having; say why there are no filters */
            rigmat_gains_explain(lti, RIGMAT_GAINS_KALMAN, &info, NULL, &e);
            fprintf(env->err, "rigmat firmware: note: no Kalman filters: ");
            cli_put_clean(env->err, e.message);
            fputc('\n', env->err);
            if (e.hint[0] != '\0') {
                fputs("  hint: ", env->err);
                cli_put_clean(env->err, e.hint);
                fputc('\n', env->err);
            }
            memset(&e, 0, sizeof e);
            kf = NULL;
            st = RIGMAT_OK;
        } else if (st != RIGMAT_OK) {
            goto report;
        }
    } else {
        fprintf(env->err, "rigmat firmware: note: the model has no sensors: no Kalman filters\n");
    }
    in.m = m;
    in.lti = lti;
    in.d = d;
    in.nz = nz;
    in.fd = fd;
    in.kf = kf;
    eo.name = name;
    eo.ctype_float = c.ctype != NULL && strcmp(c.ctype, "float") == 0;
    eo.source = cli_source_line(&c, file, source, sizeof source);
    hf = open_memstream(&hbuf, &hlen);
    cf = open_memstream(&cbuf, &clen);
    if (hf == NULL || cf == NULL) {
        st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
        goto report;
    }
    st = rigmat_firmware_write(&in, &eo, hf, cf, &cn, &e);
    {
        const int bad = (fclose(hf) != 0) | (fclose(cf) != 0);
        hf = cf = NULL;
        if (st == RIGMAT_OK && bad)
            st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory while writing the sources");
    }
    if (st != RIGMAT_OK)
        goto report;
    if (stat(dir, &sb) != 0) {
        if (make_folders(dir) != 0) {
            char why[RIGMAT_STRERROR_LEN];
            fprintf(env->err, "rigmat firmware: error: cannot make the folder '%s': %s\n", dir,
                    rigmat_strerror(errno, why, sizeof why));
            st = RIGMAT_EIO;
            goto done;
        }
    } else if (!S_ISDIR(sb.st_mode)) {
        fprintf(env->err, "rigmat firmware: error: '%s' is not a folder\n"
                          "  hint: -o names the folder that receives NAME.h and NAME.c\n", dir);
        st = RIGMAT_EIO;
        goto done;
    }
    {
        const char *const paths[2] = { hpath, cpath };
        const char *const data[2] = { hbuf, cbuf };
        const size_t lens[2] = { hlen, clen };
        st = cli_outfile_write_all(paths, data, lens, 2, &e);
        if (st != RIGMAT_OK)
            goto report;
    }
    if (st == RIGMAT_OK)
        fprintf(env->out, "wrote %s and %s; f: %lu operations, h: %lu, jacobians: %lu\n", hpath,
                cpath,
                cn.f[RIGMAT_FW_ADD] + cn.f[RIGMAT_FW_MUL] + cn.f[RIGMAT_FW_DIV] +
                        cn.f[RIGMAT_FW_SQRT] + cn.f[RIGMAT_FW_SIN] + cn.f[RIGMAT_FW_COS],
                cn.h[RIGMAT_FW_ADD] + cn.h[RIGMAT_FW_MUL] + cn.h[RIGMAT_FW_DIV] +
                        cn.h[RIGMAT_FW_SQRT] + cn.h[RIGMAT_FW_SIN] + cn.h[RIGMAT_FW_COS],
                cn.jac[RIGMAT_FW_ADD] + cn.jac[RIGMAT_FW_MUL] + cn.jac[RIGMAT_FW_DIV] +
                        cn.jac[RIGMAT_FW_SQRT] + cn.jac[RIGMAT_FW_SIN] + cn.jac[RIGMAT_FW_COS]);
    goto done;
report:
    st = cli_report(env, &e);
done:
    if (hf != NULL)
        fclose(hf);
    if (cf != NULL)
        fclose(cf);
    free(hbuf);
    free(cbuf);
    free(hpath);
    free(cpath);
    rigmat_kalman_free(kf);
    rigmat_riccati_ws_free(kw);
    rigmat_gains_ws_free(gw);
    rigmat_noise_free(nz);
    rigmat_dlti_free(d);
    if (fd != NULL)
        gsl_vector_free(fd);
    rigmat_noise_ws_free(nw);
    rigmat_discretize_ws_free(dw);
    rigmat_lti_free(lti);
    rigmat_model_free(m);
    return st;
}
