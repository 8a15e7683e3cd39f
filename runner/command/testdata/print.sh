# Prints its first argument as its output (an energy line, or anything
# else), like a program that finished.
printf '%s\n' "toy: done" "$1"
