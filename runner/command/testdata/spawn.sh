# Ignores SIGTERM (the setting is inherited by its children), starts a
# grandchild that would outlive it, records the grandchild's pid, and hangs.
trap '' TERM
sleep 300 &
echo $! > grandchild.pid
echo "toy: iterating forever"
sleep 300
