#!/usr/bin/env bash
# Regenerates every example output in reports/ with the exact commands below (run from the repository root).
set -euo pipefail
cd "$(dirname "$0")/.."
out=reports
# 1. Analyse two bundled synthetic recordings (summary table and JSON).
for f in speech_hiss_snr15 speech_high_clipped; do
  COLUMNS=100 voiceband analyze "corpus_synthetic/$f.wav" --json "$out/analyze_$f.json" --force > "$out/analyze_$f.txt"
done
# 2. Measure a simulated chain: write a sweep, pass it through a 300-2700 Hz Butterworth band-pass
#    with 0.25 s of delay (a stand-in for a real transmitter and receiver), then measure the response.
voiceband testsignal sweep --out "$out/sweep_48k.wav" --force > /dev/null
python reports/simulate_chain.py "$out/sweep_48k.wav" "$out/sweep_through_bandpass.wav"
voiceband response "$out/sweep_48k.wav" "$out/sweep_through_bandpass.wav" --out "$out" \
  --json "$out/response_bandpass.json" --force > "$out/response_bandpass.txt"
rm -f "$out/sweep_48k.wav" "$out/sweep_through_bandpass.wav"   # large, and regenerated exactly by this script
# 3. An on-air test report (index.html with verdicts for SSB voice, what to change, figures; analysis.json,
#    summary.md, the figures as PNG) for the hot-microphone recording.
voiceband report corpus_synthetic/speech_high_clipped.wav --profile ssb-voice --out "$out/report_speech_high_clipped" \
  --title "Example: a hot microphone on SSB (synthetic recording)" \
  --notes "High voice, raised effort, clipped at half of full scale before the last gain stage." --force > /dev/null
