/* html_driver.c - writes the HTML report of a summary with
 * mc_study_html_report(), the call `report --html` makes.
 *   html_driver SUMMARY.h5 OUT.html */
#include <stdio.h> /* fprintf */

#include <msgcensus/summary.h>

#include "study.h"

int main(int argc, char **argv)
{
    if (argc != 3) {
        fprintf(stderr, "usage: html_driver SUMMARY.h5 OUT.html\n");
        return 2;
    }
    mc_summary *s = NULL;
    mc_errinfo err;
    mc_errinfo_clear(&err);
    int rc = mc_summary_read(argv[1], &s, &err);
    if (rc == 0)
        rc = mc_study_html_report(s, argv[2], &err);
    if (rc != 0) {
        char line[2048];
        mc_errinfo_format(&err, line, sizeof line);
        fprintf(stderr, "html_driver: %s\n", line);
    }
    mc_summary_free(s);
    return rc == 0 ? 0 : 1;
}
