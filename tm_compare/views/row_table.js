// A clickable table: every cell is set with textContent, so no corpus or label text is
// ever parsed as HTML. Clicking a row sets the model's `selected` to that row's key.
function render({ model, el }) {
  const wrap = document.createElement("div");
  wrap.className = "tmc-rows";
  el.appendChild(wrap);
  function draw() {
    const table = document.createElement("table");
    const caption = model.get("caption");
    if (caption) {
      const cap = table.createCaption();
      cap.textContent = caption;
    }
    const head = table.createTHead().insertRow();
    for (const name of model.get("columns")) {
      const th = document.createElement("th");
      th.textContent = name;
      head.appendChild(th);
    }
    const body = table.createTBody();
    const keys = model.get("row_keys");
    const picked = JSON.stringify(model.get("selected"));
    model.get("rows").forEach((row, i) => {
      const tr = body.insertRow();
      const key = keys[i];
      tr.dataset.key = String(key);
      if (JSON.stringify(key) === picked) tr.className = "tmc-picked";
      for (const cell of row) {
        tr.insertCell().textContent = cell === null ? "" : String(cell);
      }
      tr.addEventListener("click", () => {
        model.set("selected", key);
        model.save_changes();
      });
    });
    wrap.replaceChildren(table);
  }
  for (const name of ["rows", "row_keys", "columns", "selected", "caption"]) {
    model.on(`change:${name}`, draw);
  }
  draw();
}
export default { render };
