/* tepid: command-line entry. Parses the verb, runs it, maps its status to the exit code. */
#include <stdio.h>

int main(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    puts("tepid " TP_VERSION);
    return 0;
}
