// The phone's camera reading a logger label: getUserMedia on the web target, a frame drawn to a canvas
// about four times a second and decoded with jsQR (pure JavaScript: no wasm, nothing fetched from elsewhere).
import React from 'react';
import { Platform, StyleSheet, Text, View } from 'react-native';
import jsQR from 'jsqr';
import { colors, radii, space, type } from './theme';

export type ScannerProblem = { title: string; detail: string };

const SCAN_EVERY_MS = 250;
/** Frames are scaled down to this width before decoding: plenty for a label held 15–30 cm away. */
const DECODE_WIDTH = 640;
/** After this long without a code, suggest distance and light. */
const HINT_AFTER_MS = 8000;

/**
 * What to type instead: a logger label prints the serial, model and board beside its QR code, not the token
 * (components/label-sheet.tsx, server/loggers/labels.ts); the token is on the bench sheet, one row per serial.
 */
export const TYPE_INSTEAD = 'Type the token from the bench sheet row with the serial printed on the label (it starts "hlt_") in the box below.';

function cameraProblem(err: unknown): ScannerProblem {
  const name = (err as { name?: string } | null)?.name;
  if (name === 'NotAllowedError' || name === 'SecurityError') {
    return {
      title: 'Camera access was refused',
      detail: `Allow the camera for this site in the browser settings and open Enroll again. Or: ${TYPE_INSTEAD}`,
    };
  }
  if (name === 'NotFoundError' || name === 'OverconstrainedError') {
    return { title: 'No camera found', detail: `This device has no camera the browser can use. ${TYPE_INSTEAD}` };
  }
  if (name === 'NotReadableError') {
    return { title: 'The camera is busy', detail: `Another app is using the camera. Close it and try again. Or: ${TYPE_INSTEAD}` };
  }
  return { title: 'The camera could not start', detail: TYPE_INSTEAD };
}

export function QrScanner({ onRead, onProblem }: { onRead: (text: string) => void; onProblem: (p: ScannerProblem) => void }) {
  const videoRef = React.useRef<HTMLVideoElement | null>(null);
  const [live, setLive] = React.useState(false);
  const [hint, setHint] = React.useState(false);
  const readRef = React.useRef(onRead);
  const problemRef = React.useRef(onProblem);
  readRef.current = onRead;
  problemRef.current = onProblem;

  React.useEffect(() => {
    if (Platform.OS !== 'web' || typeof navigator === 'undefined') return;
    let stopped = false;
    let stream: MediaStream | null = null;
    let timer: ReturnType<typeof setInterval> | undefined;
    const hintTimer = setTimeout(() => setHint(true), HINT_AFTER_MS);
    const canvas = document.createElement('canvas');
    const context = canvas.getContext('2d', { willReadFrequently: true });

    const scan = () => {
      const video = videoRef.current;
      if (!video || !context || video.readyState < 2 || !video.videoWidth) return;
      const scale = Math.min(1, DECODE_WIDTH / video.videoWidth);
      const w = Math.round(video.videoWidth * scale);
      const h = Math.round(video.videoHeight * scale);
      if (canvas.width !== w) canvas.width = w;
      if (canvas.height !== h) canvas.height = h;
      context.drawImage(video, 0, 0, w, h);
      const frame = context.getImageData(0, 0, w, h);
      const code = jsQR(frame.data, w, h, { inversionAttempts: 'dontInvert' });
      if (code?.data) readRef.current(code.data);
    };

    (async () => {
      if (!navigator.mediaDevices?.getUserMedia) {
        problemRef.current({
          title: 'This browser cannot open the camera here',
          detail: `The camera needs the console on a secure (https) address. ${TYPE_INSTEAD}`,
        });
        return;
      }
      try {
        stream = await navigator.mediaDevices.getUserMedia({ video: { facingMode: { ideal: 'environment' } }, audio: false });
      } catch (err) {
        if (!stopped) problemRef.current(cameraProblem(err));
        return;
      }
      const video = videoRef.current;
      if (stopped || !video) {
        stream.getTracks().forEach((t) => t.stop());
        return;
      }
      video.srcObject = stream;
      try {
        await video.play();
      } catch {
        // Autoplay of a muted inline video is allowed; a refusal only delays the first frame.
      }
      if (stopped) return;
      setLive(true);
      timer = setInterval(scan, SCAN_EVERY_MS);
    })();

    return () => {
      stopped = true;
      clearInterval(timer);
      clearTimeout(hintTimer);
      stream?.getTracks().forEach((t) => t.stop());
    };
  }, []);

  if (Platform.OS !== 'web') return null;
  return (
    <View style={styles.frame} testID="scanner">
      <video ref={videoRef} muted playsInline autoPlay aria-label="Camera view" style={{ width: '100%', height: '100%', objectFit: 'cover', display: 'block' }} />
      <View style={styles.target} pointerEvents="none" />
      <View style={styles.caption} pointerEvents="none">
        <Text style={[type.small, { color: colors.onInk, textAlign: 'center' }]}>
          {!live ? 'Starting the camera…' : hint ? 'No label code found yet: hold the label 15–30 cm away, in good light, inside the frame.' : 'Point the camera at the QR code on the logger label.'}
        </Text>
      </View>
    </View>
  );
}

const styles = StyleSheet.create({
  frame: { width: '100%', aspectRatio: 4 / 3, maxHeight: 420, backgroundColor: colors.ink, borderRadius: radii.lg, overflow: 'hidden', position: 'relative' },
  target: { position: 'absolute', top: '15%', bottom: '15%', left: '25%', right: '25%', borderColor: colors.heliodor, borderWidth: 3, borderRadius: radii.md },
  caption: { position: 'absolute', left: 0, right: 0, bottom: 0, padding: space.sm, backgroundColor: colors.ink, opacity: 0.85 },
});
