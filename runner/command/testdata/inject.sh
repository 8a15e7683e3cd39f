# Records exactly what it received, in files; never evaluates any of it.
# If wellscan ever spliced a value into a shell command line, the markers
# in the test's title, key, coordinates or arguments would create files.
printf '%s' "$WELLSCAN_TITLE" > seen-title
printf '%s' "$WELLSCAN_KEY" > seen-key
printf '%s' "$1" > seen-arg
env | grep '^WELLSCAN_COORD_' | sort > seen-coords
cat "$WELLSCAN_INPUT" > seen-input
echo "well energy / eV : -1.5"
