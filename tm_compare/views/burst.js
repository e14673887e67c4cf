// One message per change (see _burst.py): the kernel sends the new state of every widget a
// change touched in one custom message, and this applies all of it in one browser task, so the
// page lays out and paints once instead of once per widget message.
export default {
  initialize({ model }) {
    model.on("msg:custom", async (msg) => {
      if (msg?.kind !== "tmc-burst") return;
      const manager = model.widget_manager;
      const targets = await Promise.all(msg.updates.map(([id]) => manager.get_model(id)));
      targets.forEach((target, i) => {
        // Queued like the widget's own updates, so it keeps its order with them.
        target.state_change = target.state_change
          .then(() => target.constructor._deserialize_state(msg.updates[i][1], manager))
          .then((state) => target.set_state(state));
      });
    });
    // Until the kernel hears this, it sends each widget's changes the usual way.
    model.send({ kind: "tmc-ready" });
  },
  render() {},
};
