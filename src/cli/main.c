/* pixpost command line — placeholder entry point, replaced by the CLI. */
#include <stdio.h>
int main(void) { fputs("pixpost: not built yet\n", stderr); return 1; }
