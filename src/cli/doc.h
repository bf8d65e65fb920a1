/* cli doc: the man pages and the bash completion script, written from the
 * same cli_command/cli_option tables that --help prints, so that neither
 * can drift from the options the parser accepts.
 *
 * The tables live inside each command's function (their entries point at
 * the function's locals), so the pages are taken the way --help is: main
 * runs the command with "--help" after cli_doc_set(), and cli_help hands
 * the table to cli_doc_command() instead of printing the text.  Entry
 * points (hidden, used by the Makefile; DEVELOPERS.md "Installing"):
 *   sheaf help --roff            sheaf(1)
 *   sheaf help --roff COMMAND    sheaf-COMMAND(1)
 *   sheaf help --completion      the bash completion script
 * The date on the pages is SOURCE_DATE_EPOCH's when set, else today's. */
#ifndef SHEAF_CLI_DOC_H
#define SHEAF_CLI_DOC_H

#include <stddef.h>
#include <stdio.h>

#include "cli/cli.h"

typedef enum {
    CLI_DOC_OFF,  /* --help prints text */
    CLI_DOC_ROFF, /* --help prints the command's man page */
    CLI_DOC_BASH  /* --help prints the command's arm of the completion function */
} cli_doc_mode;

/* What the next cli_help writes; what is the command's one-line summary
 * (the NAME line of its page), version goes in the page footer. */
void cli_doc_set(cli_doc_mode mode, const char *what, const char *version);
/* cli_help's hook: writes the doc form of cmd to stdout and returns 1 when
 * a mode is set, else returns 0. */
int cli_doc_command(const cli_command *cmd);

/* sheaf(1) from the text of `sheaf --help`: its usage line is the
 * SYNOPSIS, a paragraph whose first line ends with ':' and whose other
 * lines are "  KEY  text" becomes a section of tagged paragraphs
 * ("commands:" refers each command to its page, "exit codes:" is EXIT
 * STATUS), any other paragraph is DESCRIPTION text; SEE ALSO names the
 * pages of the n_commands commands. */
void cli_doc_roff_top(FILE *f, const char *help_text, const char *const *commands, size_t n_commands,
                      const char *version);

/* The completion script: the function head (the commands, `help`, the
 * top-level options), one arm per command from cli_doc_command, the tail. */
void cli_doc_bash_begin(FILE *f, const char *const *commands, size_t n);
void cli_doc_bash_end(FILE *f);

#endif
