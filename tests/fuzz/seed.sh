#!/bin/sh
# Seed the fuzzing corpora: sh tests/fuzz/seed.sh DIR (from the repository
# root). Copies every field book into DIR/fieldbook and every XML project
# into DIR/xml, from examples/, projects/*/, tests/bad/ (and its inc/) and
# tests/unit/data/, named by content hash so that reseeding adds nothing
# twice. A file goes by its extension (.xml, .cfb), else by content as the
# loader decides: first non-blank character '<' means XML. A few hand-made seeds for corners the examples
# do not reach are added as well.
set -u
dir=${1:?usage: sh tests/fuzz/seed.sh CORPUS_DIR}
mkdir -p "$dir/fieldbook" "$dir/xml" || exit 2

add() { # add KIND FILE
    h=$(cksum <"$2" | cut -d' ' -f1)
    cp "$2" "$dir/$1/seed-$h" || exit 2
}

n=0
for f in examples/*.cfb examples/*.xml projects/*/*.cfb projects/*/*.xml \
         tests/bad/*.cfb tests/bad/*.xml tests/bad/inc/* tests/unit/data/*; do
    [ -f "$f" ] || continue
    # Seeds over the fuzzers' -max_len would only be cut.
    [ "$(wc -c <"$f")" -le 65536 ] || continue
    case $f in
    *.xml) add xml "$f" ;;
    *.cfb) add fieldbook "$f" ;;
    *) if [ "$(tr -d ' \t\r\n' <"$f" | dd bs=1 count=1 2>/dev/null)" = "<" ]; then
           add xml "$f"
       else
           add fieldbook "$f"
       fi ;;
    esac
    n=$((n + 1))
done

tmp=$(mktemp -d) || exit 2
trap 'rm -rf "$tmp"' EXIT
# Field books of the sandbox (fuzz_common.c), and include chains.
printf 'fieldbook good.cfb\nfieldbook units.cfb\nfieldbook chain1.cfb\n' >"$tmp/a"
printf 'fieldbook self.cfb\nfieldbook loop1.cfb\nfieldbook dir.cfb\nfieldbook bad.cfb\n' >"$tmp/b"
printf 'fieldbook fuzz.cfb\nmark F1 e 1 n 2\n' >"$tmp/c"
printf 'units usft gon\noption tolerance 5 mm + 10 ppm\noption loop-allowance 4mm\nat A ppm 12 ih 1\nto B hz 399.9999 zen 100.0 slope 10 face 2 hz-sd 3cc zen-sd 0.5mgon dist-sd 2mm+2ppm ppm -3\n' >"$tmp/d"
printf 'title "quoted title" and more\ndescription x\nangle A B C 1-2-3.5 sd 2"\nrise A B -0.5 setups 4 sd 1mm\n' >"$tmp/e"
for f in a b c d e; do add fieldbook "$tmp/$f"; done
cat >"$tmp/x1" <<'XML'
<?xml version="1.0" encoding="UTF-8"?>
<cairn-project format="1">
  <units length="ft" angle="gon"/>
  <fieldbook file="good.cfb"/>
  <fieldbook file="self.cfb"/>
  <fieldbook file="fuzz.xml"/>
  <setup at="G1"><sight to="G2" hz="1" zen="99" slope="3" face="2"/></setup>
  <!-- a comment <mark id="X"/> -->
  <![CDATA[ <mark id="Y"/> ]]>
</cairn-project>
XML
cat >"$tmp/x2" <<'XML'
<!DOCTYPE cairn-project [ <!ELEMENT cairn-project ANY> ]>
<cairn-project format="1"><title>T &amp; &#x41;</title><description>d</description>
<options dimension="3" tolerance="1 mm + 2 ppm" max-iterations="9" loop-allowance="4 mm"/>
<instrument id="L" per-setup="0.3 mm"/><rise from="A" to="B" value="1" setups="2"/>
<angle at="A" from="B" to="C" value="10.2030" sd="1 sec"/></cairn-project>
XML
for f in x1 x2; do add xml "$tmp/$f"; done
echo "fuzz: seeded $n files (+7 hand-made) into $dir"
