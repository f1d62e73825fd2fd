/* outmode.h - small rules for new output files, kept apart from the writer
 * (outfile.c) so either can move without the other. */
#ifndef RIGMAT_OUTMODE_H
#define RIGMAT_OUTMODE_H

/* The mode a new regular file gets: 0666 less the process umask, as
 * open(2) would give it (common practice for programs that write files). */
unsigned rigmat_outmode_file(void);
/* The same for a new folder: 0777 less the umask. */
unsigned rigmat_outmode_folder(void);
/* A mkstemp/mkdtemp template in the folder of path whose last part stays
 * short however long the name of path is: "DIR/rigmat.tmp-XXXXXX".  Owned by
 * the caller; NULL when memory runs out. */
char *rigmat_outmode_temp(const char *path);

#endif
