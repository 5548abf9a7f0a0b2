#!/bin/sh
# An external predictor for the demo: reads the holdout features that
# `unseen eval --command` sends (unseen_token first) and predicts that
# every crate passes. A real one would load a model from an attached file.
awk -F, 'NR == 1 { print "token,prediction"; next } { print $1 ",1" }'
