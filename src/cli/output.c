/* output.c - rendering a command's result in the chosen format, and
 * writing a folder of files (the mtx format) whole or not at all.
 *
 * Folder method: the files are built in memory first (env->files), then
 * written into a new folder beside the target ("DIR.tmp-XXXXXX", from
 * mkdtemp), each flushed with fsync, and the folder renamed into place.
 * An existing target folder is first renamed aside and removed only after
 * the new one is in place; if the second rename fails it is renamed back.
 * A target that holds anything but files of the extension being written
 * is refused, so a mistyped -o never deletes someone's work (a sweep's npy
 * folder also holds its index.json).
 */
#define _XOPEN_SOURCE 700 /* mkdtemp */
#include "cli.h"
#include "outmode.h"

#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <signal.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

const char *const cli_all_formats[] = { "text", "json", "csv", "c", "numpy", "mtx", "latex",
    NULL };

/* ------------------------------------------------------------ the sink */

static FILE *open_part(void *ctx, const char *name)
{
    struct cli_files *files = ctx;
    struct cli_file *cf;
    size_t n = strlen(name) + 1;

    if (files->n == sizeof files->items / sizeof files->items[0] || strchr(name, '/') != NULL)
        return NULL;
    cf = &files->items[files->n];
    memset(cf, 0, sizeof *cf);
    cf->name = malloc(n);
    if (cf->name == NULL)
        return NULL;
    memcpy(cf->name, name, n);
    cf->f = open_memstream(&cf->buf, &cf->len);
    if (cf->f == NULL) {
        free(cf->name);
        return NULL;
    }
    files->n++;
    return cf->f;
}

void cli_files_release(struct cli_files *files)
{
    size_t i;

    for (i = 0; i < files->n; i++) {
        if (files->items[i].f != NULL)
            fclose(files->items[i].f);
        free(files->items[i].buf);
        free(files->items[i].name);
    }
    files->n = 0;
    for (i = 0; i < sizeof files->keep / sizeof files->keep[0]; i++) {
        free(files->keep[i]);
        files->keep[i] = NULL;
    }
}

/* FNV-1a 64 of the model file (Fowler, Noll and Vo; the parameters of the
 * IETF draft "The FNV Non-Cryptographic Hash Algorithm", section 2): a
 * short fingerprint for the provenance line, not a security measure. */
static int file_hash(const char *path, unsigned long long *h)
{
    FILE *f = fopen(path, "rb");
    int c;

    if (f == NULL)
        return -1;
    *h = 14695981039346656037ULL;
    while ((c = getc(f)) != EOF) {
        *h ^= (unsigned long long)(unsigned char)c;
        *h *= 1099511628211ULL;
    }
    c = ferror(f);
    fclose(f);
    return c ? -1 : 0;
}

rigmat_status cli_export_options(struct cli_env *env, const struct cli_common *c)
{
    const rigmat_format_info *fi = rigmat_format_find(c->format != NULL ? c->format : "text");

    if ((c->ctype != NULL || c->name != NULL) && (fi == NULL || fi->format != RIGMAT_FORMAT_C)) {
        fprintf(env->err, "rigmat %s: --%s applies to the C header only\n"
                "  hint: add --format c, or leave --%s out\n", env->command,
                c->ctype != NULL ? "ctype" : "name", c->ctype != NULL ? "ctype" : "name");
        return RIGMAT_EUSAGE;
    }
    if (c->ctype != NULL && strcmp(c->ctype, "float") != 0 && strcmp(c->ctype, "double") != 0) {
        fprintf(env->err, "rigmat %s: unknown --ctype '%s'\n  hint: use double or float\n",
                env->command, c->ctype);
        return RIGMAT_EUSAGE;
    }
    return RIGMAT_OK;
}

const char *cli_source_line(const struct cli_common *c, const char *model_file, char *source,
        size_t len)
{
    const char *base = strrchr(model_file, '/');
    unsigned long long h;
    size_t i, used;

    base = base != NULL ? base + 1 : model_file;
    if (file_hash(model_file, &h) == 0)
        snprintf(source, len, "%s (FNV-1a 64 of the file: %016llx)", base, h);
    else
        snprintf(source, len, "%s", base);
    used = strlen(source);
    for (i = 0; i < c->sets.count && used + 1 < len; i++) {
        const int w = snprintf(source + used, len - used, "%s --set %s", i ? "" : " with",
                c->sets.items[i]);
        if (w < 0)
            break;
        used += (size_t)w;
        if (used >= len)
            used = len - 1;
    }
    return source;
}

rigmat_status cli_emit(struct cli_env *env, const rigmat_result *r, const struct cli_common *c,
        const char *model_file)
{
    const rigmat_format_info *fi = rigmat_format_find(c->format != NULL ? c->format : "text");
    rigmat_emit_opts o;
    rigmat_emit_sink sink;
    rigmat_error e;
    char source[512];
    rigmat_status st;

    memset(&e, 0, sizeof e);
    memset(&o, 0, sizeof o);
    if (fi == NULL)
        return RIGMAT_EUSAGE; /* cli_format refused it already */
    o.ctype_float = c->ctype != NULL && strcmp(c->ctype, "float") == 0;
    o.name = c->name;
    if (model_file != NULL)
        o.source = cli_source_line(c, model_file, source, sizeof source);
    sink.open = open_part;
    sink.ctx = &env->files;
    st = rigmat_result_write(r, fi->format, &o, env->out, &sink, &e);
    if (st != RIGMAT_OK) {
        cli_files_release(&env->files);
        return cli_report(env, &e);
    }
    env->files.folder = fi->folder;
    snprintf(env->files.ext, sizeof env->files.ext, ".%s", fi->word);
    return RIGMAT_OK;
}

/* ------------------------------------------------------------ the folder */

/* Whether name ends in ext (a non-empty ".mtx") after at least one character. */
static int has_ext(const char *name, const char *ext)
{
    const size_t n = strlen(name), k = strlen(ext);
    return k > 1 && ext[0] == '.' && n > k && strcmp(name + n - k, ext) == 0;
}

/* Remove the files of dir (only its plain entries) and dir itself. */
static void remove_folder(const char *dir)
{
    DIR *d = opendir(dir);
    struct dirent *de;
    char path[4096];

    if (d != NULL) {
        while ((de = readdir(d)) != NULL) {
            if (strcmp(de->d_name, ".") == 0 || strcmp(de->d_name, "..") == 0)
                continue;
            snprintf(path, sizeof path, "%s/%s", dir, de->d_name);
            unlink(path);
        }
        closedir(d);
    }
    rmdir(dir);
}

/* Whether an existing folder holds only files ending in ext. */
static int only_exports(const char *dir, const char *ext)
{
    DIR *d = opendir(dir);
    struct dirent *de;
    int ok = 1;

    if (d == NULL)
        return 0;
    while ((de = readdir(d)) != NULL)
        if (strcmp(de->d_name, ".") != 0 && strcmp(de->d_name, "..") != 0 &&
                !has_ext(de->d_name, ext) &&
                !(strcmp(ext, ".npy") == 0 && strcmp(de->d_name, "index.json") == 0))
            ok = 0;
    closedir(d);
    return ok;
}

static rigmat_status write_one(const char *dir, const struct cli_file *cf, rigmat_error *err)
{
    char path[4096];
    size_t done = 0;
    int fd;

    snprintf(path, sizeof path, "%s/%s", dir, cf->name);
    fd = open(path, O_WRONLY | O_CREAT | O_EXCL, 0666); /* less the umask */
    if (fd < 0)
        return RIGMAT_FAIL(err, RIGMAT_EIO, "cannot create '%s': %s", path, strerror(errno));
    /* buf's bytes, then the tail's */
    while (done < cf->len + cf->tail_len) {
        const char *at = done < cf->len ? cf->buf + done : cf->tail + (done - cf->len);
        const size_t left = done < cf->len ? cf->len - done : cf->len + cf->tail_len - done;
        const ssize_t n = write(fd, at, left);
        if (n < 0 && errno == EINTR)
            continue;
        if (n < 0) {
            close(fd);
            return RIGMAT_FAIL(err, RIGMAT_EIO, "cannot write '%s': %s", path, strerror(errno));
        }
        done += (size_t)n;
    }
    if (fsync(fd) != 0 || close(fd) != 0)
        return RIGMAT_FAIL(err, RIGMAT_EIO, "cannot write '%s': %s", path, strerror(errno));
    return RIGMAT_OK;
}

rigmat_status cli_outdir_write(const char *path, struct cli_files *files, rigmat_error *err)
{
    const char *ext = files->ext;
    char *tmp = NULL, *old = NULL;
    struct stat st;
    int exists;
    size_t i, n = strlen(path);
    rigmat_status rc = RIGMAT_OK;
    sigset_t block, prev;

    while (n > 1 && path[n - 1] == '/')
        n--;
    exists = stat(path, &st) == 0;
    if (exists && !S_ISDIR(st.st_mode))
        return RIGMAT_FAIL(err, RIGMAT_EIO, "cannot write the folder '%s': a file of that name "
                "exists", path);
    if (exists && !only_exports(path, ext)) {
        rc = RIGMAT_FAIL(err, RIGMAT_EIO, "the folder '%s' holds other files than %s files",
                path, ext);
        rigmat_error_hint(err, "give a new or empty folder; rigmat replaces a folder only when "
                "it holds nothing but a previous export");
        return rc;
    }
    tmp = malloc(n + 16);
    old = malloc(n + 16);
    if (tmp == NULL || old == NULL) {
        free(tmp);
        free(old);
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    }
    snprintf(tmp, n + 16, "%.*s.tmp-XXXXXX", (int)n, path);
    snprintf(old, n + 16, "%.*s.old-XXXXXX", (int)n, path);
    /* hold the terminating signals while temporaries exist */
    sigemptyset(&block);
    sigaddset(&block, SIGINT);
    sigaddset(&block, SIGTERM);
    sigaddset(&block, SIGHUP);
    sigprocmask(SIG_BLOCK, &block, &prev);
    if (mkdtemp(tmp) == NULL) {
        rc = RIGMAT_FAIL(err, RIGMAT_EIO, "cannot create a folder beside '%s': %s", path,
                strerror(errno));
        goto done;
    }
    for (i = 0; i < files->n && rc == RIGMAT_OK; i++)
        rc = write_one(tmp, &files->items[i], err);
    if (rc == RIGMAT_OK && chmod(tmp, (mode_t)rigmat_outmode_folder()) != 0)
        rc = RIGMAT_FAIL(err, RIGMAT_EIO, "cannot write '%s': %s", tmp, strerror(errno));
    if (rc != RIGMAT_OK) {
        remove_folder(tmp);
        goto done;
    }
    if (exists) {
        /* mkdtemp makes the name ours; an empty folder can be renamed over */
        if (mkdtemp(old) == NULL || rename(path, old) != 0) {
            rc = RIGMAT_FAIL(err, RIGMAT_EIO, "cannot replace '%s': %s", path, strerror(errno));
            rmdir(old);
            remove_folder(tmp);
            goto done;
        }
    }
    if (rename(tmp, path) != 0) {
        rc = RIGMAT_FAIL(err, RIGMAT_EIO, "cannot replace '%s': %s", path, strerror(errno));
        if (exists)
            rename(old, path);
        remove_folder(tmp);
        goto done;
    }
    if (exists)
        remove_folder(old);
done:
    sigprocmask(SIG_SETMASK, &prev, NULL);
    free(tmp);
    free(old);
    return rc;
}
