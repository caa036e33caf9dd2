# Mask what changes from run to run in report.txt and report.html: the
# date and time of the run and the command line (which names the results
# directory); with -v sha=1 also the SHA-256 fingerprints of the inputs.
# Used by tests/integration/test-reports.sh and golden/demo_check.sh.
#   awk -f mask.awk [-v sha=1] report.txt
BEGIN { skip = 0; hex = ""; for (i = 0; i < 64; i++) hex = hex "[0-9a-f]" }
{
    if (skip && /^                  /) next   # continuation of the command line
    skip = 0
    if (/^  run at /) { print "  run at          <date>"; next }
    if (/^  command line /) { print "  command line    <command line>"; skip = 1; next }
    if (/<tr><th>run at<\/th>/) { print "<tr><th>run at</th><td>&lt;date&gt;</td></tr>"; next }
    if (/<tr><th>command line<\/th>/) {
        print "<tr><th>command line</th><td class=\"mono\">&lt;command line&gt;</td></tr>"; next
    }
    if (sha) gsub(hex, "<sha256>")
    print
}
