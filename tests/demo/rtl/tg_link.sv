// Radio link framer on the link clock; takes the logger's alarm.
module tg_link (
    input  logic       clk_link,
    input  logic       rst_n,
    input  logic       alarm,
    input  logic       link_rx,
    output logic [7:0] frame
);
  // correct: a chain written as a concatenation shift
  logic [1:0] alarm_s;
  always_ff @(posedge clk_link or negedge rst_n) begin
    if (!rst_n) alarm_s <= 2'b00;
    else        alarm_s <= {alarm_s[0], alarm};
  end

  always_ff @(posedge clk_link or negedge rst_n) begin
    if (!rst_n) frame <= 8'h00;
    else        frame <= {frame[5:0], link_rx, alarm_s[1]};
  end
endmodule
