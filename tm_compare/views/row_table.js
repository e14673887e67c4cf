// A clickable table: every cell is set with textContent, so no corpus or label text is
// ever parsed as HTML. Clicking a row sets the model's `selected` to that row's key.
function render({ model, el }) {
  const wrap = document.createElement("div");
  wrap.className = "tmc-rows";
  el.appendChild(wrap);
  let drawn = []; // [row element, its key as JSON], for marking the picked row
  function mark() {
    const picked = JSON.stringify(model.get("selected"));
    for (const [tr, key] of drawn) tr.classList.toggle("tmc-picked", key === picked);
  }
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
    drawn = [];
    model.get("rows").forEach((row, i) => {
      const tr = body.insertRow();
      const key = keys[i];
      tr.dataset.key = String(key);
      drawn.push([tr, JSON.stringify(key)]);
      for (const cell of row) {
        tr.insertCell().textContent = cell === null ? "" : String(cell);
      }
      tr.addEventListener("click", () => {
        model.set("selected", key);
        model.save_changes();
      });
    });
    mark();
    wrap.replaceChildren(table);
  }
  for (const name of ["rows", "row_keys", "columns", "caption"]) {
    model.on(`change:${name}`, draw);
  }
  // A new pick only moves the highlight: the rows stay as drawn.
  model.on("change:selected", mark);
  draw();
}
export default { render };
