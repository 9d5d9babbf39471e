// Sample logger in the system clock domain.
module tg_logger (
    input             clk_sys,
    input             rst_n,
    input             sample_tgl,
    input             ovr_q,
    input             ovr_hi_q,
    input             storm_n,
    output reg [15:0] sample_count,
    output reg        alarm
);
  // correct: the toggle passes a two-flop synchronizer (a wrapper module)
  wire tgl_s;
  tg_sync2 u_sync_tgl (.clk(clk_sys), .rst_n(rst_n), .d(sample_tgl), .q(tgl_s));
  reg  tgl_d;
  wire new_sample = tgl_s ^ tgl_d;   // edge detect on the last stage

  // correct: the storm input passes a chain written in this process
  reg storm_s1, storm_s2;

  always @(posedge clk_sys or negedge rst_n)
    if (!rst_n) begin
      tgl_d        <= 1'b0;
      storm_s1     <= 1'b1;
      storm_s2     <= 1'b1;
      sample_count <= 16'd0;
      alarm        <= 1'b0;
    end else begin
      tgl_d    <= tgl_s;
      storm_s1 <= storm_n;
      storm_s2 <= storm_s1;
      if (new_sample)
        sample_count <= sample_count + 16'd1;
      // BUG: ovr_q comes from the ADC domain with no synchronizer
      alarm <= ovr_q | ~storm_s2;
    end

  // BUG: logic of two ADC-domain bits in front of the first stage
  reg ovr_any_s1, ovr_any_s2;
  always @(posedge clk_sys) begin
    ovr_any_s1 <= ovr_q | ovr_hi_q;
    ovr_any_s2 <= ovr_any_s1;
  end
endmodule
