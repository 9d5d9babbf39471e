// Two-flop level synchronizer for one bit.
module tg_sync2 (
    input  logic clk,
    input  logic rst_n,
    input  logic d,
    output logic q
);
  logic meta;
  always_ff @(posedge clk or negedge rst_n) begin
    if (!rst_n) begin
      meta <= 1'b0;
      q    <= 1'b0;
    end else begin
      meta <= d;
      q    <= meta;
    end
  end
endmodule
