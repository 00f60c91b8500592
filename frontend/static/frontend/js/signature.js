// A drawn signature on a canvas with pointer events (finger, pen or mouse).
export function attachSignature(canvas, { onChange = () => {} } = {}) {
  const ctx = canvas.getContext("2d");
  let drawing = false;
  let strokes = 0;

  function fit() {
    const ratio = window.devicePixelRatio || 1;
    const rect = canvas.getBoundingClientRect();
    canvas.width = Math.max(1, Math.round(rect.width * ratio));
    canvas.height = Math.max(1, Math.round(rect.height * ratio));
    ctx.setTransform(ratio, 0, 0, ratio, 0, 0);
    ctx.lineWidth = 2.5;
    ctx.lineCap = "round";
    ctx.lineJoin = "round";
    ctx.strokeStyle = "#111111";
    strokes = 0;
  }

  function point(event) {
    const rect = canvas.getBoundingClientRect();
    return [event.clientX - rect.left, event.clientY - rect.top];
  }

  canvas.addEventListener("pointerdown", (event) => {
    drawing = true;
    canvas.setPointerCapture(event.pointerId);
    const [x, y] = point(event);
    ctx.beginPath();
    ctx.moveTo(x, y);
    ctx.lineTo(x + 0.1, y + 0.1);
    ctx.stroke();
  });
  canvas.addEventListener("pointermove", (event) => {
    if (!drawing) return;
    const [x, y] = point(event);
    ctx.lineTo(x, y);
    ctx.stroke();
  });
  const end = () => {
    if (drawing) { drawing = false; strokes += 1; onChange(strokes); }
  };
  canvas.addEventListener("pointerup", end);
  canvas.addEventListener("pointercancel", end);
  fit();

  return {
    isEmpty: () => strokes === 0,
    clear: () => { ctx.clearRect(0, 0, canvas.width, canvas.height); strokes = 0; onChange(0); },
    toDataUrl: () => canvas.toDataURL("image/png"),
  };
}
