# Fails the way a program does when its input is wrong.
echo "toy: reading input"
echo "toy: unknown keyword 'nonsense' on line 2" >&2
exit 3
