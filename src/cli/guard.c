/* guard.c - the input is never the output: `linearize m.yaml -o m.yaml`
 * must not replace the model with its matrices.  Every file read is noted
 * by device and inode (a second name, a symbolic link or a hard link of
 * the model is the same file), and the output is refused with exit 2
 * before anything is written when it is one of them. */
#include "cli.h"

#include <string.h>
#include <sys/stat.h>

void cli_note_input(struct cli_env *env, const char *path)
{
    struct stat st;
    size_t i;

    if (path == NULL || stat(path, &st) != 0 || !S_ISREG(st.st_mode))
        return;
    for (i = 0; i < env->ninputs; i++)
        if (env->inputs[i].dev == (unsigned long long)st.st_dev &&
                env->inputs[i].ino == (unsigned long long)st.st_ino)
            return;
    if (env->ninputs == sizeof env->inputs / sizeof env->inputs[0]) {
        env->inputs_lost = 1;
        return;
    }
    env->inputs[env->ninputs].dev = (unsigned long long)st.st_dev;
    env->inputs[env->ninputs].ino = (unsigned long long)st.st_ino;
    env->ninputs++;
}

void cli_note_model_inputs(struct cli_env *env, const rigmat_model *m)
{
    size_t i;

    if (m == NULL)
        return;
    cli_note_input(env, m->file);
    if (m->owner_diags != NULL)
        for (i = 0; i < m->owner_diags->nfiles; i++)
            cli_note_input(env, m->owner_diags->files[i]);
}

rigmat_status cli_output_guard(struct cli_env *env, const char *path)
{
    struct stat st;
    size_t i;

    if (path == NULL || strcmp(path, "-") == 0 || stat(path, &st) != 0 ||
            !S_ISREG(st.st_mode))
        return RIGMAT_OK;
    for (i = 0; i < env->ninputs; i++)
        if (env->inputs[i].dev == (unsigned long long)st.st_dev &&
                env->inputs[i].ino == (unsigned long long)st.st_ino)
            break;
    if (i == env->ninputs && !env->inputs_lost)
        return RIGMAT_OK;
    fprintf(env->err, "rigmat %s: error: the output '%s' is %s\n", env->command, path,
            i < env->ninputs ? "one of the input files" : "an existing file, and too many "
            "inputs were read to tell whether it is one of them");
    fputs("  hint: give -o a new name; rigmat never writes over its model, a part or a "
          "weights file\n", env->err);
    return RIGMAT_EUSAGE;
}

static void warn_folder(struct cli_env *env, const char *what, const char *path)
{
    struct stat st;

    if (path == NULL || path[0] == '\0' || (stat(path, &st) == 0 && S_ISDIR(st.st_mode)))
        return;
    fprintf(env->err, "rigmat %s: warning: %s '", env->command, what);
    cli_put_clean(env->err, path);
    fprintf(env->err, "' is %s, so it is not searched for parts\n",
            stat(path, &st) != 0 ? "not there" : "not a folder");
}

void cli_catalog_warn(struct cli_env *env)
{
    static int done;

    if (done)
        return;
    done = 1;
    warn_folder(env, "--catalog", env->opt.catalog_dir);
    warn_folder(env, "RIGMAT_CATALOG", env->opt.catalog_env);
}

FILE *cli_scratch_open(void)
{
    return fopen("/dev/null", "w");
}

void cli_scratch_close(FILE *f)
{
    if (f != NULL)
        fclose(f);
}
