/* probe_peak_rss CMD [ARG...]: runs CMD (fork + execvp, its output as is)
 * and prints "<exit status> <peak resident KiB>" on stdout, the peak as the
 * kernel measured it (getrusage(RUSAGE_CHILDREN).ru_maxrss, KiB on Linux:
 * getrusage(2)). A small forking parent, because a process started by
 * Python (vfork/posix_spawn) inherits Python's own high-water mark across
 * exec. For tests/ref_memory_check.py. */
#include <stdio.h>
#include <stdlib.h>
#include <sys/resource.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <unistd.h>

int main(int argc, char **argv)
{
    if (argc < 2) {
        fprintf(stderr, "usage: probe_peak_rss CMD [ARG...]\n");
        return 2;
    }
    pid_t pid = fork();
    if (pid < 0) {
        perror("probe_peak_rss: fork");
        return 2;
    }
    if (pid == 0) {
        execvp(argv[1], argv + 1);
        perror("probe_peak_rss: exec");
        _exit(127);
    }
    int status = 0;
    if (waitpid(pid, &status, 0) != pid) {
        perror("probe_peak_rss: waitpid");
        return 2;
    }
    struct rusage ru;
    if (getrusage(RUSAGE_CHILDREN, &ru) != 0) {
        perror("probe_peak_rss: getrusage");
        return 2;
    }
    printf("%d %ld\n", WIFEXITED(status) ? WEXITSTATUS(status) : 128, ru.ru_maxrss);
    return 0;
}
