/* commands.h -- every command's entry point and description.
 *
 * Each command lives in src/cli/cmd_NAME.c and defines
 *     const struct cli_cmd cmd_NAME_info;   its name, synopsis, options
 *     int cmd_NAME(int argc, char **argv);  argv[0] is the command name;
 *                                           returns the exit status
 */
#ifndef VECSIFT_COMMANDS_H
#define VECSIFT_COMMANDS_H

#include "cli.h"

#define VECSIFT_COMMAND(x) \
    extern const struct cli_cmd cmd_##x##_info; \
    int cmd_##x(int argc, char **argv)

/* Keep alphabetical, like the table in main.c. */
VECSIFT_COMMAND(audit);
VECSIFT_COMMAND(compare);
VECSIFT_COMMAND(curve);
VECSIFT_COMMAND(demo);
VECSIFT_COMMAND(evaluate);
VECSIFT_COMMAND(features);
VECSIFT_COMMAND(map);
VECSIFT_COMMAND(predict);
VECSIFT_COMMAND(serve);
VECSIFT_COMMAND(suggest);
VECSIFT_COMMAND(train);
VECSIFT_COMMAND(vectors);
VECSIFT_COMMAND(vectors_learn);

#endif
